/**
 * The command line's code cache (extension/cli/codeCache.ts): a bundle loaded through it behaves as under `require`,
 * its cache is made once and used after, a cache for other bytes or other V8 flags is never used, a damaged cache is
 * rejected (and made again) without changing what runs, and an unsafe folder is not used. V8's own rules for its
 * cache (rejected when the flags differ; `cachedDataRejected`): Node.js documentation of `vm.Script`
 * (`cachedData`, `produceCachedData`, `createCachedData`).
 */
import { describe, expect, it } from 'vitest';
import { chmodSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import os from 'node:os';
import path from 'node:path';
import { cacheFolder, cacheName, loadBundle } from '../../extension/cli/codeCache';

const root = path.resolve(__dirname, '../..');

/** A small CommonJS bundle in a fresh folder, with a cache folder beside it. */
function bundle(body: string): { file: string; folder: string } {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'residuum-cc-'));
  const file = path.join(dir, 'tool.js');
  writeFileSync(file, body);
  const folder = path.join(dir, 'cache');
  mkdirSync(folder, { mode: 0o700 });
  return { file, folder };
}

const BODY = `'use strict';
const path = require('node:path');
function twice(x) { return 2 * x; }
module.exports = { twice, file: __filename, dir: __dirname, joined: path.join('a', 'b'), selfIsMain: require.main === module };
`;

describe('loadBundle', () => {
  it('runs the bundle as require would: its exports, __filename, __dirname, require of Node modules', () => {
    const { file, folder } = bundle(BODY);
    const { exports, cache } = loadBundle(file, { folder });
    const e = exports as { twice(x: number): number; file: string; dir: string; joined: string; selfIsMain: boolean };
    expect(cache).toBe('made');
    expect(e.twice(21)).toBe(42);
    expect(e.file).toBe(file);
    expect(e.dir).toBe(path.dirname(file));
    expect(e.joined).toBe(path.join('a', 'b'));
    expect(e.selfIsMain).toBe(false); // the bundle's own "run directly" branch stays off
  });

  it('makes the cache once and uses it on the next load; other bytes get a cache of their own', () => {
    const { file, folder } = bundle(BODY);
    const first = loadBundle(file, { folder });
    expect(first.cache).toBe('made');
    first.save();
    expect(readdirSync(folder).filter((f) => f.endsWith('.v8cache'))).toEqual([cacheName(file, BODY)]);
    const second = loadBundle(file, { folder });
    expect(second.cache).toBe('used');
    expect((second.exports as { twice(x: number): number }).twice(4)).toBe(8);
    // a rebuilt bundle of the same length: V8 checks little more than the length, so the name must differ
    const rebuilt = BODY.replace('2 * x', '3 * x');
    expect(rebuilt.length).toBe(BODY.length);
    writeFileSync(file, rebuilt);
    expect(cacheName(file, rebuilt)).not.toBe(cacheName(file, BODY));
    const third = loadBundle(file, { folder });
    expect(third.cache).toBe('made');
    expect((third.exports as { twice(x: number): number }).twice(4)).toBe(12);
  });

  it('names the cache by the V8 flags too, those set at run time included (V8 rejects a cache made under other flags)', () => {
    const { file, folder } = bundle(BODY);
    loadBundle(file, { folder }).save();
    expect(loadBundle(file, { folder, flags: ['--no-concurrent-recompilation'] }).cache).toBe('made');
    expect(cacheName('/x/tool.js', BODY, ['--no-concurrent-recompilation'])).not.toBe(cacheName('/x/tool.js', BODY, []));
    expect(cacheName('/x/tool.js', BODY, [])).toBe(cacheName('/y/tool.js', BODY, [])); // the folder does not matter
  });

  it('rejects a damaged cache, runs the bundle all the same and makes the cache again', () => {
    const { file, folder } = bundle(BODY);
    const name = path.join(folder, cacheName(file, BODY));
    writeFileSync(name, Buffer.from('not a code cache at all, just bytes'.repeat(20)));
    const r = loadBundle(file, { folder });
    expect(r.cache).toBe('rejected');
    expect((r.exports as { twice(x: number): number }).twice(5)).toBe(10);
    r.save();
    expect(loadBundle(file, { folder }).cache).toBe('used');
  });

  it('goes without a cache when there is no folder; a folder it cannot write only means no cache', () => {
    const { file, folder } = bundle(BODY);
    expect(loadBundle(file, { folder: null }).cache).toBe('off');
    const gone = loadBundle(file, { folder: path.join(folder, 'missing', 'deeper') });
    expect((gone.exports as { twice(x: number): number }).twice(1)).toBe(2);
    gone.save(); // writing into a folder that is not there: no throw
    expect(readdirSync(folder)).toEqual([]);
  });
});

describe('cacheFolder', () => {
  it('is off with RESIDUUM_CODE_CACHE=0, the given folder otherwise (made with mode 0700)', () => {
    expect(cacheFolder({ RESIDUUM_CODE_CACHE: '0' })).toBeUndefined();
    const dir = path.join(mkdtempSync(path.join(os.tmpdir(), 'residuum-cc-')), 'own');
    expect(cacheFolder({ RESIDUUM_CODE_CACHE: dir })).toBe(dir);
    if (process.platform !== 'win32') expect(readdirSync(path.dirname(dir))).toEqual(['own']);
  });

  it.skipIf(process.platform === 'win32')('refuses a folder others may write to (code read from it is run)', () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'residuum-cc-'));
    chmodSync(dir, 0o777);
    expect(cacheFolder({ RESIDUUM_CODE_CACHE: dir })).toBeUndefined();
    chmodSync(dir, 0o700);
    expect(cacheFolder({ RESIDUUM_CODE_CACHE: dir })).toBe(dir);
  });
});

describe('the command line with its cache', () => {
  it('answers the same with a cache made, with it used, and without one', () => {
    const folder = mkdtempSync(path.join(os.tmpdir(), 'residuum-cc-'));
    const log = path.join(root, 'demo', 'warehouse-flight.csv');
    const run = (cache: string): { out: string; status: number | null } => {
      const r = spawnSync(process.execPath, [path.join(root, 'dist/cli.js'), 'analyze', log, '--json'],
        { encoding: 'utf8', env: { ...process.env, RESIDUUM_CODE_CACHE: cache }, timeout: 120_000 });
      return { out: r.stdout, status: r.status };
    };
    const made = run(folder);
    expect(made.status).toBe(0);
    const files = readdirSync(folder).filter((f) => f.startsWith('cliMain.js.') && f.endsWith('.v8cache'));
    expect(files.length).toBeGreaterThan(0);
    expect(readFileSync(path.join(folder, files[0])).length).toBeGreaterThan(100_000); // the run's functions are in it
    const used = run(folder);
    const off = run('0');
    expect(used.status).toBe(0);
    expect(off.status).toBe(0);
    const strip = (s: string): unknown => { const r = JSON.parse(s) as { tool?: unknown; generated?: unknown }; delete r.generated; return r; };
    expect(strip(used.out)).toEqual(strip(made.out));
    expect(strip(off.out)).toEqual(strip(made.out));
  });
});

import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { BENCH_OPTIONS, DEMO_FLIGHT_OPTIONS, generateWarehouseLog } from '../../extension/core/demo/warehouse';

const root = resolve(__dirname, '../..');

describe('scripts/gen-demo.mjs', () => {
  it('writes exactly the generator output, through a temporary file that does not stay behind', () => {
    const dir = mkdtempSync(join(tmpdir(), 'residuum-gen-'));
    const out = join(dir, 'log.jsonl');
    const r = spawnSync(process.execPath, ['scripts/gen-demo.mjs', '--out', out, '--duration', '2', '--format', 'jsonl', '--seed', '3'], { cwd: root, encoding: 'utf8' });
    expect(r.status).toBe(0);
    const expected = [...generateWarehouseLog({ ...DEMO_FLIGHT_OPTIONS, duration_s: 2, format: 'jsonl', seed: 3 })].join('');
    expect(readFileSync(out, 'utf8')).toBe(expected);
    expect(readdirSync(dir)).toEqual(['log.jsonl']);
    const summary = JSON.parse(r.stdout);
    expect(summary.bytes).toBe(Buffer.byteLength(expected));
    expect(summary.lines).toBe(expected.split('\n').length - 1);
  });

  it('--bench starts from the benchmark options (49 columns, six decimals)', () => {
    const dir = mkdtempSync(join(tmpdir(), 'residuum-gen-'));
    const out = join(dir, 'b.csv');
    const r = spawnSync(process.execPath, ['scripts/gen-demo.mjs', '--bench', '--rows', '50', '--out', out], { cwd: root, encoding: 'utf8' });
    expect(r.status).toBe(0);
    expect(readFileSync(out, 'utf8')).toBe([...generateWarehouseLog({ ...BENCH_OPTIONS, rows: 50 })].join(''));
  });

  it('refuses a bad option with one line and exit status 2', () => {
    const r = spawnSync(process.execPath, ['scripts/gen-demo.mjs', '--out', join(tmpdir(), 'x.csv'), '--format', 'xml'], { cwd: root, encoding: 'utf8' });
    expect(r.status).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toContain('--format');
  });
});

/**
 * The launcher of `residuum` (extension/cli/launch.ts): when it re-runs the tool in a child with glibc's huge-page
 * tunable, and that the child's answers (output, exit status) reach the caller unchanged.
 * The tunable's name and syntax: glibc manual, "Memory Allocation Tunables" (glibc.malloc.hugetlb, glibc 2.35+).
 */
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import { childV8Flags, hugePageEnv, HUGE_PAGE_TUNABLE } from '../../extension/cli/launch';

const root = path.resolve(__dirname, '../..');
const cli = path.join(root, 'dist/cli.js');

describe('hugePageEnv', () => {
  it('asks for huge pages on Linux for the verbs that read logs', () => {
    for (const verb of ['analyze', 'check', 'compare', 'montecarlo']) {
      expect(hugePageEnv({ PATH: '/bin' }, 'linux', verb)).toEqual({ PATH: '/bin', GLIBC_TUNABLES: HUGE_PAGE_TUNABLE });
    }
  });
  it('keeps tunables the user set and adds its own after them', () => {
    expect(hugePageEnv({ GLIBC_TUNABLES: 'glibc.malloc.arena_max=2' }, 'linux', 'analyze')?.GLIBC_TUNABLES)
      .toBe('glibc.malloc.arena_max=2:glibc.malloc.hugetlb=1');
  });
  it('runs in this process elsewhere, for other verbs, when asked, and in the child itself', () => {
    expect(hugePageEnv({}, 'darwin', 'analyze')).toBeUndefined();
    expect(hugePageEnv({}, 'win32', 'analyze')).toBeUndefined();
    expect(hugePageEnv({}, 'linux', '--help')).toBeUndefined();
    expect(hugePageEnv({}, 'linux', undefined)).toBeUndefined();
    expect(hugePageEnv({ RESIDUUM_NO_REEXEC: '1' }, 'linux', 'analyze')).toBeUndefined();
    // The child sees the tunable (its own or one the user chose, even =0) and does not start another child.
    expect(hugePageEnv({ GLIBC_TUNABLES: HUGE_PAGE_TUNABLE }, 'linux', 'analyze')).toBeUndefined();
    expect(hugePageEnv({ GLIBC_TUNABLES: 'glibc.malloc.hugetlb=0' }, 'linux', 'analyze')).toBeUndefined();
  });
});

describe('childV8Flags', () => {
  it('compiles on the running thread on machines with two cores or fewer, in the background elsewhere', () => {
    expect(childV8Flags(1)).toEqual(['--no-concurrent-recompilation']);
    expect(childV8Flags(2)).toEqual(['--no-concurrent-recompilation']);
    expect(childV8Flags(4)).toEqual([]);
  });
});

describe('dist/cli.js through the child', () => {
  const run = (args: string[], env: NodeJS.ProcessEnv) => spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8', env });
  it('gives the same message and exit status with and without the child', () => {
    const viaChild = run(['analyze', '/no/such/residuum-log.csv'], { ...process.env, RESIDUUM_NO_REEXEC: '' });
    const here = run(['analyze', '/no/such/residuum-log.csv'], { ...process.env, RESIDUUM_NO_REEXEC: '1' });
    expect(viaChild.status).toBe(2);
    expect(here.status).toBe(2);
    expect(viaChild.stderr).toBe(here.stderr);
    expect(viaChild.stderr).toMatch(/log not found: .*residuum-log\.csv/);
  });

  it("starts one child with the tunable and the parent's Node flags, which does the work", () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'residuum-launch-'));
    const seen = path.join(dir, 'seen.txt');
    const preload = path.join(dir, 'preload.js');
    // Every process that loads the preload writes whether it has the tunable: the parent (without) and its child (with).
    writeFileSync(preload, `require('fs').appendFileSync(${JSON.stringify(seen)}, (process.env.GLIBC_TUNABLES || '-') + ' ' + process.execArgv.filter((a) => a.startsWith('--')).join(',') + '\\n');`);
    const r = spawnSync(process.execPath, ['-r', preload, cli, 'analyze', '/no/such/residuum-log.csv'],
      { encoding: 'utf8', env: { ...process.env, RESIDUUM_NO_REEXEC: '', GLIBC_TUNABLES: '' } });
    expect(r.status).toBe(2);
    const lines = readFileSync(seen, 'utf8').trim().split('\n');
    // The child gets the parent's flags (-r) after its own V8 flags (childV8Flags of this machine's cores).
    const v8 = childV8Flags(os.availableParallelism()).join(',');
    if (process.platform === 'linux') expect(lines).toEqual(['- ', `${HUGE_PAGE_TUNABLE} ${v8}`]);
    else expect(lines).toEqual(['- ']);
  });
});

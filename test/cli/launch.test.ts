/**
 * The launcher of `residuum` (extension/cli/launch.ts): which child it starts on which machine (V8 flags, glibc's
 * huge-page tunable, or none), and that the child's answers (output, exit status) reach the caller unchanged.
 * The tunable's name and syntax: glibc manual, "Memory Allocation Tunables" (glibc.malloc.hugetlb, glibc 2.35+).
 */
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import { childPlan, childV8Flags, hugePagesWanted, HUGE_PAGE_TUNABLE, pageFaultCost_us, SLOW_FAULT_US } from '../../extension/cli/launch';

const root = path.resolve(__dirname, '../..');
const cli = path.join(root, 'dist/cli.js');

const slow = (): number => 12; // microseconds per fault, as measured on one virtual machine (README "Performance")
const cheap = (): number => 1.5;
const never = (): number => { throw new Error('the probe must not run'); };

describe('hugePagesWanted', () => {
  it('asks for huge pages on Linux where page faults are slow, not where they are cheap', () => {
    expect(hugePagesWanted({}, 'linux', slow)).toBe(true);
    expect(hugePagesWanted({}, 'linux', cheap)).toBe(false);
    expect(hugePagesWanted({}, 'linux', () => SLOW_FAULT_US)).toBe(true);
  });
  it('RESIDUUM_HUGE_PAGES decides instead of the probe; a tunable the user set, or another system, means no', () => {
    expect(hugePagesWanted({ RESIDUUM_HUGE_PAGES: '1' }, 'linux', never)).toBe(true);
    expect(hugePagesWanted({ RESIDUUM_HUGE_PAGES: '0' }, 'linux', never)).toBe(false);
    expect(hugePagesWanted({ GLIBC_TUNABLES: 'glibc.malloc.hugetlb=0' }, 'linux', never)).toBe(false);
    expect(hugePagesWanted({}, 'darwin', never)).toBe(false);
    expect(hugePagesWanted({}, 'win32', never)).toBe(false);
  });
});

describe('pageFaultCost_us', () => {
  it('is a positive time per page (its size depends on the machine)', () => {
    const us = pageFaultCost_us(1 << 20);
    expect(Number.isFinite(us)).toBe(true);
    expect(us).toBeGreaterThan(0);
  });
});

describe('childV8Flags', () => {
  it('compiles on the running thread on machines with two cores or fewer, in the background elsewhere', () => {
    expect(childV8Flags(1)).toEqual(['--no-concurrent-recompilation']);
    expect(childV8Flags(2)).toEqual(['--no-concurrent-recompilation']);
    expect(childV8Flags(4)).toEqual([]);
  });
});

describe('childPlan', () => {
  it('a child with the flag and huge pages on a slow-fault 2-core Linux machine, for the verbs that read logs', () => {
    for (const verb of ['analyze', 'check', 'compare', 'montecarlo']) {
      expect(childPlan({ PATH: '/bin' }, 'linux', verb, 2, slow)).toEqual({
        env: { PATH: '/bin', RESIDUUM_LAUNCHED: '1', GLIBC_TUNABLES: HUGE_PAGE_TUNABLE }, flags: ['--no-concurrent-recompilation'],
      });
    }
  });
  it('keeps tunables the user set and adds its own after them', () => {
    expect(childPlan({ GLIBC_TUNABLES: 'glibc.malloc.arena_max=2' }, 'linux', 'analyze', 8, slow)?.env.GLIBC_TUNABLES)
      .toBe('glibc.malloc.arena_max=2:glibc.malloc.hugetlb=1');
  });
  it('only the flag where faults are cheap; only huge pages on a machine with more cores', () => {
    expect(childPlan({}, 'linux', 'analyze', 2, cheap)).toEqual({ env: { RESIDUUM_LAUNCHED: '1' }, flags: ['--no-concurrent-recompilation'] });
    expect(childPlan({}, 'linux', 'analyze', 8, slow)).toEqual({ env: { RESIDUUM_LAUNCHED: '1', GLIBC_TUNABLES: HUGE_PAGE_TUNABLE }, flags: [] });
    expect(childPlan({}, 'darwin', 'analyze', 2, never)).toEqual({ env: { RESIDUUM_LAUNCHED: '1' }, flags: ['--no-concurrent-recompilation'] });
  });
  it('runs in this process when nothing changes, for other verbs, when asked, and in the child itself', () => {
    expect(childPlan({}, 'linux', 'analyze', 8, cheap)).toBeUndefined();
    expect(childPlan({}, 'darwin', 'analyze', 8, never)).toBeUndefined();
    expect(childPlan({}, 'linux', '--help', 2, never)).toBeUndefined();
    expect(childPlan({}, 'linux', 'export', 2, never)).toBeUndefined();
    expect(childPlan({}, 'linux', undefined, 2, never)).toBeUndefined();
    expect(childPlan({ RESIDUUM_NO_REEXEC: '1' }, 'linux', 'analyze', 2, never)).toBeUndefined();
    expect(childPlan({ RESIDUUM_LAUNCHED: '1' }, 'linux', 'analyze', 2, never)).toBeUndefined();
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

  it("starts one child with the machine's settings and the parent's Node flags, which does the work", () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'residuum-launch-'));
    const seen = path.join(dir, 'seen.txt');
    const preload = path.join(dir, 'preload.js');
    // Every process that loads the preload writes its tunables and its Node flags: the parent, then its child.
    writeFileSync(preload, `require('fs').appendFileSync(${JSON.stringify(seen)}, (process.env.GLIBC_TUNABLES || '-') + ' ' + process.execArgv.filter((a) => a.startsWith('--')).join(',') + '\\n');`);
    for (const huge of ['1', '0']) {
      writeFileSync(seen, '');
      const r = spawnSync(process.execPath, ['-r', preload, cli, 'analyze', '/no/such/residuum-log.csv'],
        { encoding: 'utf8', env: { ...process.env, RESIDUUM_NO_REEXEC: '', RESIDUUM_LAUNCHED: '', GLIBC_TUNABLES: '', RESIDUUM_HUGE_PAGES: huge } });
      expect(r.status).toBe(2);
      const lines = readFileSync(seen, 'utf8').trim().split('\n');
      // The child gets the parent's flags (-r, not listed) after its own V8 flags (childV8Flags of this machine).
      const v8 = childV8Flags(os.availableParallelism()).join(',');
      const tunable = huge === '1' && process.platform === 'linux' ? HUGE_PAGE_TUNABLE : '-';
      if (tunable === '-' && v8 === '') expect(lines).toEqual(['- ']); // nothing to change: no child
      else expect(lines).toEqual(['- ', `${tunable} ${v8}`]);
    }
  });
});

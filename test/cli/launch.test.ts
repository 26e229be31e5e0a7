/**
 * The launcher of `residuum` (extension/cli/launch.ts): which child it starts on which machine (V8 flags, glibc's
 * huge-page tunable, or none), and that the child's answers (output, exit status) reach the caller unchanged.
 * The tunable's name and syntax: glibc manual, "Memory Allocation Tunables" (glibc.malloc.hugetlb, glibc 2.35+).
 */
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { mkdtempSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import { childV8Flags, hugePagesWanted, HUGE_PAGE_TUNABLE, largestLogBytes, launchPlan, pageFaultCost_us, SLOW_FAULT_US, TUNED_MIN_LOG_BYTES } from '../../extension/cli/launch';

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

describe('launchPlan', () => {
  const NC = ['--no-concurrent-recompilation'];
  it('a child process where huge pages are wanted (glibc reads the tunable only at start), with the V8 flags', () => {
    for (const verb of ['analyze', 'check', 'compare', 'montecarlo']) {
      expect(launchPlan({ PATH: '/bin' }, 'linux', verb, 2, slow)).toEqual({
        how: 'child', env: { PATH: '/bin', RESIDUUM_LAUNCHED: '1', GLIBC_TUNABLES: HUGE_PAGE_TUNABLE }, flags: NC,
      });
    }
    expect(launchPlan({ GLIBC_TUNABLES: 'glibc.malloc.arena_max=2' }, 'linux', 'analyze', 8, slow))
      .toEqual({ how: 'child', env: { RESIDUUM_LAUNCHED: '1', GLIBC_TUNABLES: 'glibc.malloc.arena_max=2:glibc.malloc.hugetlb=1' }, flags: [] });
  });
  it('a thread of its own when V8 flags are all there is to set (two cores or fewer, faults cheap or not Linux)', () => {
    expect(launchPlan({}, 'linux', 'analyze', 2, cheap)).toEqual({ how: 'thread', flags: NC });
    expect(launchPlan({}, 'darwin', 'analyze', 1, never)).toEqual({ how: 'thread', flags: NC });
    expect(launchPlan({ RESIDUUM_HUGE_PAGES: '0' }, 'linux', 'check', 2, never)).toEqual({ how: 'thread', flags: NC });
  });
  it("the user's own concurrent-recompilation flag wins: none of ours (then a thread has nothing to do)", () => {
    expect(launchPlan({}, 'linux', 'analyze', 2, cheap, ['--concurrent-recompilation'])).toEqual({ how: 'here' });
    expect(launchPlan({}, 'linux', 'analyze', 2, cheap, ['--no_concurrent_recompilation'])).toEqual({ how: 'here' });
    expect(launchPlan({}, 'linux', 'analyze', 2, slow, ['--concurrent-recompilation'])).toMatchObject({ how: 'child', flags: [] });
    expect(launchPlan({}, 'linux', 'analyze', 2, cheap, ['--max-old-space-size=4096'])).toEqual({ how: 'thread', flags: NC });
  });
  it('runs a small log here with V8 defaults (one analysis thread: the background compiler has a free core), a large or unknown one tuned', () => {
    const small = TUNED_MIN_LOG_BYTES - 1;
    expect(launchPlan({}, 'linux', 'analyze', 2, never, [], small)).toEqual({ how: 'here' });
    expect(launchPlan({ RESIDUUM_HUGE_PAGES: '1' }, 'linux', 'analyze', 2, never, [], small)).toEqual({ how: 'here' });
    expect(launchPlan({}, 'linux', 'analyze', 2, cheap, [], TUNED_MIN_LOG_BYTES)).toEqual({ how: 'thread', flags: NC });
    expect(launchPlan({}, 'linux', 'analyze', 2, slow, [], 100 * 2 ** 20)).toMatchObject({ how: 'child', flags: NC });
    expect(launchPlan({}, 'linux', 'montecarlo', 2, cheap, [], undefined)).toEqual({ how: 'thread', flags: NC });
  });
  it('runs here when nothing changes, for other verbs, when asked, and in the child itself', () => {
    expect(launchPlan({}, 'linux', 'analyze', 8, cheap)).toEqual({ how: 'here' });
    expect(launchPlan({}, 'darwin', 'analyze', 8, never)).toEqual({ how: 'here' });
    expect(launchPlan({}, 'linux', '--help', 2, never)).toEqual({ how: 'here' });
    expect(launchPlan({}, 'linux', 'export', 2, never)).toEqual({ how: 'here' });
    expect(launchPlan({}, 'linux', undefined, 2, never)).toEqual({ how: 'here' });
    expect(launchPlan({ RESIDUUM_NO_REEXEC: '1' }, 'linux', 'analyze', 2, never)).toEqual({ how: 'here' });
    expect(launchPlan({ RESIDUUM_LAUNCHED: '1' }, 'linux', 'analyze', 2, never)).toEqual({ how: 'here' });
  });
});

describe('largestLogBytes', () => {
  const files: Record<string, { isFile(): boolean; size: number }> = {
    'a.csv': { isFile: () => true, size: 10 }, 'b.csv': { isFile: () => true, size: 30 },
    'anchors.csv': { isFile: () => true, size: 2 }, runs: { isFile: () => false, size: 4096 },
  };
  const stat = (p: string): { isFile(): boolean; size: number } | undefined => files[p];
  it('is the largest file named, options and missing paths left out; unknown for a folder or when no file is named', () => {
    expect(largestLogBytes(['a.csv', 'b.csv', '--align', 'start'], stat)).toBe(30);
    expect(largestLogBytes(['a.csv', '--anchors', 'anchors.csv', '--json'], stat)).toBe(10);
    expect(largestLogBytes(['missing.csv', 'a.csv'], stat)).toBe(10);
    expect(largestLogBytes(['runs'], stat)).toBeUndefined();
    expect(largestLogBytes(['missing.csv'], stat)).toBeUndefined();
    expect(largestLogBytes([], stat)).toBeUndefined();
  });
});

describe('dist/cli.js through the child or the thread', () => {
  const run = (args: string[], env: NodeJS.ProcessEnv) => spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8', env, timeout: 120_000 });
  const planned = { ...process.env, RESIDUUM_NO_REEXEC: '', RESIDUUM_LAUNCHED: '', GLIBC_TUNABLES: '' };
  const here = { ...process.env, RESIDUUM_NO_REEXEC: '1' };
  it('gives the same message and exit status through a child, a thread and here', () => {
    for (const huge of ['1', '0']) {
      const planned_ = run(['analyze', '/no/such/residuum-log.csv'], { ...planned, RESIDUUM_HUGE_PAGES: huge });
      const direct = run(['analyze', '/no/such/residuum-log.csv'], here);
      expect(planned_.status).toBe(2);
      expect(direct.status).toBe(2);
      expect(planned_.stderr).toBe(direct.stderr);
      expect(planned_.stderr).toMatch(/log not found: .*residuum-log\.csv/);
    }
  });

  it('gives the same report, output and exit status through the thread as here (a real analysis and a failed gate)', () => {
    // a log above TUNED_MIN_LOG_BYTES (smaller ones run here anyway): the demo scene's benchmark columns, 40,000 rows
    const dir0 = mkdtempSync(path.join(os.tmpdir(), 'residuum-launch-'));
    const log = path.join(dir0, 'large.csv');
    const gen = spawnSync(process.execPath, [path.join(root, 'dist/gen-demo.js'), '--bench', '--rows', '40000', '--format', 'csv', '--out', log], { encoding: 'utf8' });
    expect(gen.status, gen.stderr).toBe(0);
    expect(statSync(log).size).toBeGreaterThanOrEqual(TUNED_MIN_LOG_BYTES);
    const strip = (s: string): unknown => { const r = JSON.parse(s) as { generated?: unknown }; delete r.generated; return r; };
    const env = { ...planned, RESIDUUM_HUGE_PAGES: '0' };
    const threaded = run(['analyze', log, '--json'], env);
    const direct = run(['analyze', log, '--json'], here);
    expect(threaded.status).toBe(0);
    expect(direct.status).toBe(0);
    expect(threaded.stdout.length).toBeGreaterThan(10_000);
    expect(strip(threaded.stdout)).toEqual(strip(direct.stdout));
    // a gate that fails: exit status 1 (report contract), the same lines
    const dir = mkdtempSync(path.join(os.tmpdir(), 'residuum-launch-'));
    const gate = path.join(dir, 'gate.json');
    writeFileSync(gate, JSON.stringify({ maxOutliers: 0 }));
    const g1 = run(['check', log, '--gate', gate], env);
    const g2 = run(['check', log, '--gate', gate], here);
    expect(g2.status).toBe(1);
    expect(g1.status).toBe(g2.status);
    expect(g1.stdout).toBe(g2.stdout);
  });

  it("starts one child with the machine's settings and the parent's Node flags where huge pages are wanted; else no child", () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'residuum-launch-'));
    const seen = path.join(dir, 'seen.txt');
    const preload = path.join(dir, 'preload.js');
    // Every process that loads the preload writes its pid, its tunables and its Node flags: the parent, then a child.
    writeFileSync(preload, `require('fs').appendFileSync(${JSON.stringify(seen)}, process.pid + ' ' + (process.env.GLIBC_TUNABLES || '-') + ' ' + process.execArgv.filter((a) => a.startsWith('--')).join(',') + '\\n');`);
    for (const huge of ['1', '0']) {
      writeFileSync(seen, '');
      const r = spawnSync(process.execPath, ['-r', preload, cli, 'analyze', '/no/such/residuum-log.csv'],
        { encoding: 'utf8', env: { ...planned, RESIDUUM_HUGE_PAGES: huge } });
      expect(r.status).toBe(2);
      const lines = readFileSync(seen, 'utf8').trim().split('\n').map((l) => l.split(' '));
      const pids = [...new Set(lines.map((l) => l[0]))];
      const parent = lines[0];
      expect(parent.slice(1)).toEqual(['-', '']);
      // The child gets the parent's flags (-r, not listed) after its own V8 flags (childV8Flags of this machine).
      const v8 = childV8Flags(os.availableParallelism()).join(',');
      if (huge === '1' && process.platform === 'linux') {
        expect(pids.length).toBe(2);
        expect(lines.find((l) => l[0] !== parent[0])?.slice(1)).toEqual([HUGE_PAGE_TUNABLE, v8]);
      } else {
        expect(pids).toEqual([parent[0]]); // flags only (a thread) or nothing to change: no second process
      }
    }
  });
});

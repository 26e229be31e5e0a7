/**
 * Entry of `residuum` (dist/cli.js): starts the command-line tool (dist/cliMain.js, extension/cli/main.ts), for the
 * verbs that read whole logs once more in a child process with settings that only a new process can take.
 *
 * Two settings, each chosen for the machine (README "Performance" has the measurements):
 * - **V8 flags** ({@link childV8Flags}). On a machine with two cores or fewer, V8 compiles optimised code on the
 *   thread that runs it (`--no-concurrent-recompilation`). The analysis keeps both cores busy (the main thread and
 *   the stage worker), so a compile job queued for a background thread waits while the loop it would speed up runs
 *   unoptimised: on the 2-core development machine the run took about 10% less time with the flag. V8 reads it
 *   only when a process starts. A flag the user gives (`node --concurrent-recompilation dist/cli.js ...`) comes
 *   after ours and wins.
 * - **Huge pages** ({@link hugePagesWanted}). An analysis writes about 100 MB of fresh column memory for the
 *   250,000-row benchmark log, and each first write to a 4 KiB page is a page fault. Where a fault is slow (about
 *   12 us on one virtual machine we measured: ~0.3 s for the columns alone), glibc (2.35 and later) is asked for
 *   2 MiB pages on its large blocks with `GLIBC_TUNABLES=glibc.malloc.hugetlb=1`, and the kernel faults 512 times
 *   less often. Where faults are cheap (about 1.5 us on another) the same tunable made the run slower (the kernel
 *   assembles each 2 MiB page on first touch), so the launcher times the faults of a fresh 4 MiB block first
 *   ({@link pageFaultCost_us}, about 2 ms) and asks for huge pages only above {@link SLOW_FAULT_US}.
 *   `RESIDUUM_HUGE_PAGES=1` or `=0` decides instead of the probe. Other C libraries and older glibc ignore the
 *   tunable.
 * When neither applies the tool runs in this process. `RESIDUUM_NO_REEXEC=1` always runs it here. The child is
 * marked (`RESIDUUM_LAUNCHED=1`) so it never starts another. `--help` and errors in the arguments are answered by
 * the child like any other run, so the output and the exit status are those of the tool itself.
 */
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { availableParallelism } from 'node:os';
import { loadBundle } from './codeCache';

/** The tunable that asks glibc's malloc for transparent huge pages (madvise mode) on its mmap'd blocks. */
export const HUGE_PAGE_TUNABLE = 'glibc.malloc.hugetlb=1';

/** A first write to a fresh 4 KiB page costing this many microseconds or more makes huge pages worth asking for. */
export const SLOW_FAULT_US = 5;

/** Verbs that read whole logs and so gain from the child's settings. */
const LOG_VERBS = new Set(['analyze', 'check', 'compare', 'montecarlo']);

/**
 * V8 flags for the child run: `--no-concurrent-recompilation` on machines with at most two cores (see the file
 * comment), none otherwise (there a background thread is free to compile).
 */
export function childV8Flags(cores: number): string[] {
  return cores <= 2 ? ['--no-concurrent-recompilation'] : [];
}

/**
 * Mean cost of a first write to a fresh 4 KiB page, microseconds: the time to touch every page of a new `bytes`
 * block once. A new ArrayBuffer of megabytes is a fresh mmap (glibc's calloc of a large block), so each touch is a
 * page fault. A timing, so it varies from run to run; only its order of magnitude is used.
 */
export function pageFaultCost_us(bytes = 4 << 20): number {
  const a = new Uint8Array(new ArrayBuffer(bytes));
  const t0 = process.hrtime.bigint();
  for (let i = 0; i < bytes; i += 4096) a[i] = 1;
  return Number(process.hrtime.bigint() - t0) / 1000 / Math.ceil(bytes / 4096);
}

/**
 * Whether the child should ask glibc for huge pages: on Linux, unless the user set the tunable themselves, when
 * `RESIDUUM_HUGE_PAGES` says so (`1` or `0`) or else when `faultCost_us()` is at least {@link SLOW_FAULT_US}
 * (called only then).
 */
export function hugePagesWanted(env: NodeJS.ProcessEnv, platform: NodeJS.Platform, faultCost_us: () => number): boolean {
  if (platform !== 'linux') return false;
  if ((env.GLIBC_TUNABLES ?? '').split(':').some((t) => t.startsWith('glibc.malloc.hugetlb='))) return false;
  if (env.RESIDUUM_HUGE_PAGES === '1') return true;
  if (env.RESIDUUM_HUGE_PAGES === '0') return false;
  return faultCost_us() >= SLOW_FAULT_US;
}

/** How to start the child: its environment and the V8 flags placed before the user's Node flags. */
export interface ChildPlan {
  env: NodeJS.ProcessEnv;
  flags: string[];
}

/**
 * The child run for `verb`, or undefined when this process should run the tool itself: not a log-reading verb,
 * `RESIDUUM_NO_REEXEC` set, already the child, or nothing to change (no flag for this machine, no huge pages).
 */
export function childPlan(env: NodeJS.ProcessEnv, platform: NodeJS.Platform, verb: string | undefined, cores: number,
  faultCost_us: () => number = pageFaultCost_us): ChildPlan | undefined {
  if (verb === undefined || !LOG_VERBS.has(verb)) return undefined;
  if (env.RESIDUUM_NO_REEXEC || env.RESIDUUM_LAUNCHED) return undefined;
  const flags = childV8Flags(cores);
  const huge = hugePagesWanted(env, platform, faultCost_us);
  if (!huge && flags.length === 0) return undefined;
  const tunables = env.GLIBC_TUNABLES ?? '';
  return {
    env: { ...env, RESIDUUM_LAUNCHED: '1', ...(huge ? { GLIBC_TUNABLES: tunables ? `${tunables}:${HUGE_PAGE_TUNABLE}` : HUGE_PAGE_TUNABLE } : {}) },
    flags,
  };
}

/**
 * The tool's own module, run in this process: loaded with a code cache (codeCache.ts). The bundle's path is computed,
 * so esbuild leaves it out of dist/cli.js, which stays small and starts at once.
 */
function runHere(mainFile: string): void {
  const tool = loadBundle(mainFile).exports as { runCommandLine(argv: string[]): void };
  tool.runCommandLine(process.argv.slice(2));
}

if (require.main === module) {
  const mainFile = path.join(__dirname, 'cliMain.js');
  const plan = childPlan(process.env, process.platform, process.argv[2], availableParallelism());
  if (!plan) {
    runHere(mainFile);
  } else {
    // Node's own flags (--cpu-prof, -r hook, --max-old-space-size) go to the child, which does the work, after ours.
    // The child starts this launcher again (RESIDUUM_LAUNCHED: it runs the tool at once), which loads the tool cached.
    const child = spawnSync(process.execPath, [...plan.flags, ...process.execArgv, __filename, ...process.argv.slice(2)], { stdio: 'inherit', env: plan.env });
    if (child.error) {
      runHere(mainFile); // could not start a process: the same run here, with this process' settings
    } else if (child.signal) {
      process.kill(process.pid, child.signal); // end the way the child ended (Ctrl-C, a kill from a CI timeout)
    } else {
      process.exitCode = child.status ?? 2;
    }
  }
}

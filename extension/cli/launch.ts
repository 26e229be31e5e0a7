/**
 * Entry of `residuum` (dist/cli.js): starts the command-line tool (dist/cliMain.js, extension/cli/main.ts), for the
 * verbs that read whole logs with settings chosen for the machine: in a thread of its own when V8 flags are all it
 * needs, in a child process when the C library must be told something at the start of a process.
 *
 * Two settings, each chosen for the machine (README "Performance" has the measurements):
 * - **V8 flags** ({@link childV8Flags}). On a machine with two cores or fewer, V8 compiles optimised code on the
 *   thread that runs it (`--no-concurrent-recompilation`). The analysis keeps both cores busy (the main thread and
 *   the stage worker), so a compile job queued for a background thread waits while the loop it would speed up runs
 *   unoptimised: on the 2-core development machine the run took about 10% less time with the flag. V8 reads it when
 *   an isolate starts, so the tool runs in a worker thread started after the flag is set (`runInThread`): a new
 *   isolate, without the ~60 ms of a second process. A concurrent-recompilation flag the user gives
 *   (`node --concurrent-recompilation dist/cli.js ...`) wins: ours is then not set.
 * - **Huge pages** ({@link hugePagesWanted}). An analysis writes about 100 MB of fresh column memory for the
 *   250,000-row benchmark log, and each first write to a 4 KiB page is a page fault. Where a fault is slow (about
 *   12 us on one virtual machine we measured: ~0.3 s for the columns alone), glibc (2.35 and later) is asked for
 *   2 MiB pages on its large blocks with `GLIBC_TUNABLES=glibc.malloc.hugetlb=1`, and the kernel faults 512 times
 *   less often. Where faults are cheap (about 1.5 us on another) the same tunable made the run slower (the kernel
 *   assembles each 2 MiB page on first touch), so the launcher times the faults of a fresh 4 MiB block first
 *   ({@link pageFaultCost_us}, about 2 ms) and asks for huge pages only above {@link SLOW_FAULT_US}.
 *   `RESIDUUM_HUGE_PAGES=1` or `=0` decides instead of the probe. Other C libraries and older glibc ignore the
 *   tunable. glibc reads it only when a process starts: huge pages mean a child process (with the V8 flags on its
 *   command line).
 * When neither applies, or the log is small ({@link TUNED_MIN_LOG_BYTES}), the tool runs in this thread with V8's
 * defaults. `RESIDUUM_NO_REEXEC=1` always runs it here. The child is marked
 * (`RESIDUUM_LAUNCHED=1`) so it never starts another. Output, messages and the exit status are the tool's own in
 * every case (`--help` and errors in the arguments included).
 */
import { spawnSync } from 'node:child_process';
import { statSync } from 'node:fs';
import path from 'node:path';
import { availableParallelism } from 'node:os';
import { getHeapStatistics, setFlagsFromString } from 'node:v8';
import { Worker } from 'node:worker_threads';
import { loadBundle } from './codeCache';

/** The tunable that asks glibc's malloc for transparent huge pages (madvise mode) on its mmap'd blocks. */
export const HUGE_PAGE_TUNABLE = 'glibc.malloc.hugetlb=1';

/** A first write to a fresh 4 KiB page costing this many microseconds or more makes huge pages worth asking for. */
export const SLOW_FAULT_US = 5;

/**
 * Logs smaller than this run in the first thread with V8's defaults (no flag, no huge pages): on the 2-core
 * development machine a log of 2 to 7 MB (5,000 to 20,000 epochs) took 60 to 110 ms longer in a thread with
 * `--no-concurrent-recompilation` than without (below 20,000 epochs the analysis uses one thread, and V8's background
 * compiler has the second core to itself), while logs of 18 MB and more (50,000 epochs and up, the stage worker busy
 * too) took 70 to 100 ms less (README "Performance"). 12 MiB lies between.
 */
export const TUNED_MIN_LOG_BYTES = 12 * 2 ** 20;

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

/** Where the tool runs: here, in a thread of its own with V8 flags set first, or in a child process. */
export type LaunchPlan =
  | { how: 'here' }
  | { how: 'thread'; flags: string[] }
  | ({ how: 'child' } & ChildPlan);

/**
 * Where the tool runs for `verb` (see the file comment): here for verbs that read no whole log, with
 * `RESIDUUM_NO_REEXEC` set, in the child itself, for a log below {@link TUNED_MIN_LOG_BYTES}, or when nothing is to
 * change; in a child process when huge pages are wanted (glibc reads its tunable only at a process's start); in a
 * thread when V8 flags are all there is to set.
 * `execArgv`: the Node flags of this process (a concurrent-recompilation flag of the user's wins over ours).
 * `logBytes`: the size of the largest log the command names ({@link largestLogBytes}), undefined when not known.
 */
export function launchPlan(env: NodeJS.ProcessEnv, platform: NodeJS.Platform, verb: string | undefined, cores: number,
  faultCost_us: () => number = pageFaultCost_us, execArgv: readonly string[] = [], logBytes?: number): LaunchPlan {
  if (verb === undefined || !LOG_VERBS.has(verb)) return { how: 'here' };
  if (env.RESIDUUM_NO_REEXEC || env.RESIDUUM_LAUNCHED) return { how: 'here' };
  if (logBytes !== undefined && logBytes < TUNED_MIN_LOG_BYTES) return { how: 'here' };
  const own = execArgv.some((a) => a.replace(/_/g, '-').includes('concurrent-recompilation'));
  const flags = own ? [] : childV8Flags(cores);
  if (hugePagesWanted(env, platform, faultCost_us)) {
    const tunables = env.GLIBC_TUNABLES ?? '';
    return {
      how: 'child', flags,
      env: { ...env, RESIDUUM_LAUNCHED: '1', GLIBC_TUNABLES: tunables ? `${tunables}:${HUGE_PAGE_TUNABLE}` : HUGE_PAGE_TUNABLE },
    };
  }
  return flags.length > 0 ? { how: 'thread', flags } : { how: 'here' };
}

/**
 * Size in bytes of the largest regular file among the command's arguments after the verb (the logs, and any small
 * file an option names), or undefined when none is one (a folder of runs, a missing path: the size is not known).
 */
export function largestLogBytes(args: readonly string[], stat: (p: string) => { isFile(): boolean; size: number } | undefined = statOrUndefined): number | undefined {
  let largest: number | undefined;
  for (const a of args) {
    if (a.startsWith('-')) continue;
    const st = stat(a);
    if (st && !st.isFile()) return undefined; // a folder (montecarlo): its logs' sizes are not looked at
    if (st) largest = Math.max(largest ?? 0, st.size);
  }
  return largest;
}

function statOrUndefined(p: string): { isFile(): boolean; size: number } | undefined {
  try { return statSync(p); } catch { return undefined; }
}

/**
 * Run the tool's bundle in this thread on `argv`, loaded with a code cache (codeCache.ts; `flags`: the V8 flags the
 * launcher set, part of the cache's name). The bundle's path is computed, so esbuild leaves it out of dist/cli.js,
 * which stays small and starts at once. Exported for the worker of `runInThread`, which loads this file again.
 */
export function runBundle(mainFile: string, argv: string[], flags: string[] = []): void {
  const tool = loadBundle(mainFile, { flags }).exports as { runCommandLine(argv: string[]): void };
  tool.runCommandLine(argv);
}

/**
 * Set the V8 `flags`, then run the tool on `argv` in a worker thread (a new isolate, which takes them): its output
 * goes to this process's, its exit status becomes this process's; a failure to start the thread runs the tool here.
 * The thread may use as much heap as this one (`--max-old-space-size` included).
 */
function runInThread(mainFile: string, argv: string[], flags: string[]): void {
  for (const f of flags) setFlagsFromString(f);
  let worker: Worker;
  try {
    worker = new Worker(`const { workerData } = require('node:worker_threads');
require(${JSON.stringify(__filename)}).runBundle(${JSON.stringify(mainFile)}, workerData.argv, workerData.flags);`, {
      eval: true, workerData: { argv, flags },
      resourceLimits: { maxOldGenerationSizeMb: Math.ceil(getHeapStatistics().heap_size_limit / 2 ** 20) },
    });
  } catch {
    runBundle(mainFile, argv, flags); // no thread: the same run here (its stage worker still gets the flags)
    return;
  }
  // The thread's output is written by this one: a closed pipe (`residuum ... | head`) ends it quietly (as main.ts).
  process.stdout.on('error', (e: NodeJS.ErrnoException) => {
    if (e.code === 'EPIPE') process.exit(process.exitCode ?? 0);
  });
  worker.on('error', (e) => {
    process.stderr.write(`residuum: internal error: ${String(e).split('\n')[0]}\n`);
    process.exitCode = 2;
  });
  worker.on('exit', (code) => { if (!process.exitCode) process.exitCode = code; });
}

if (require.main === module) {
  const mainFile = path.join(__dirname, 'cliMain.js');
  const argv = process.argv.slice(2);
  const plan = launchPlan(process.env, process.platform, argv[0], availableParallelism(), pageFaultCost_us, process.execArgv,
    largestLogBytes(argv.slice(1)));
  if (plan.how === 'here') {
    runBundle(mainFile, argv);
  } else if (plan.how === 'thread') {
    runInThread(mainFile, argv, plan.flags);
  } else {
    // The child starts this launcher again (RESIDUUM_LAUNCHED: it runs the tool at once, cached); Node's own flags
    // (--cpu-prof, -r hook, --max-old-space-size) go to it after ours.
    const child = spawnSync(process.execPath, [...plan.flags, ...process.execArgv, __filename, ...argv], { stdio: 'inherit', env: plan.env });
    if (child.error) {
      runBundle(mainFile, argv); // could not start a process: the same run here, with this process' settings
    } else if (child.signal) {
      process.kill(process.pid, child.signal); // end the way the child ended (Ctrl-C, a kill from a CI timeout)
    } else {
      process.exitCode = child.status ?? 2;
    }
  }
}

/**
 * Entry of `residuum` (dist/cli.js): starts the command-line tool (dist/cliMain.js, extension/cli/main.ts), on Linux
 * once more in a child process whose C library backs big allocations with transparent huge pages.
 *
 * Why: an analysis writes about 100 MB of fresh column memory for the 250,000-row benchmark log. Each first write to a
 * 4 KiB page is a page fault; on virtual machines a fault can cost about 12 us, so the columns alone cost ~0.3 s.
 * glibc (2.35 and later) asks the kernel for 2 MiB pages for its large blocks when `GLIBC_TUNABLES` holds
 * `glibc.malloc.hugetlb=1`, and the kernel then faults 512 times less often (measured in README "Performance").
 * The tunable is read only when a process starts, hence the child. Other C libraries and older glibc ignore it, so the
 * child is then an ordinary run. Set `RESIDUUM_NO_REEXEC=1` to run in this process whatever the platform.
 * The child also gets {@link childV8Flags}: on a machine with two cores or fewer, V8 compiles optimised code on the
 * thread that runs it (`--no-concurrent-recompilation`). The analysis keeps both cores busy (the main thread and the
 * stage worker), so a compile job queued for a background thread waits while the loop it would speed up runs
 * unoptimised: on the 2-core development machine the stages took about 30% less time with the flag (README
 * "Performance"). A flag the user gives (`node --concurrent-recompilation dist/cli.js ...`) comes after and wins.
 * Only the verbs that read logs are re-run; `--help` and errors in the arguments are answered by the child like any
 * other run, so the output and the exit status are those of the tool itself.
 */
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { availableParallelism } from 'node:os';

/** The tunable that asks glibc's malloc for transparent huge pages (madvise mode) on its mmap'd blocks. */
export const HUGE_PAGE_TUNABLE = 'glibc.malloc.hugetlb=1';

/** Verbs that read whole logs and so gain from huge pages. */
const LOG_VERBS = new Set(['analyze', 'check', 'compare', 'montecarlo']);

/**
 * The environment for a child run with huge pages, or undefined when this process should run the tool itself:
 * not Linux, not a log-reading verb, `RESIDUUM_NO_REEXEC` set, or the tunable already in `GLIBC_TUNABLES` (which
 * is also how the child knows it is the child).
 */
export function hugePageEnv(env: NodeJS.ProcessEnv, platform: NodeJS.Platform, verb: string | undefined): NodeJS.ProcessEnv | undefined {
  if (platform !== 'linux' || verb === undefined || !LOG_VERBS.has(verb)) return undefined;
  if (env.RESIDUUM_NO_REEXEC) return undefined;
  const tunables = env.GLIBC_TUNABLES ?? '';
  if (tunables.split(':').some((t) => t.startsWith('glibc.malloc.hugetlb='))) return undefined;
  return { ...env, GLIBC_TUNABLES: tunables ? `${tunables}:${HUGE_PAGE_TUNABLE}` : HUGE_PAGE_TUNABLE };
}

/**
 * V8 flags for the child run: `--no-concurrent-recompilation` on machines with at most two cores (see the file
 * comment), none otherwise (there a background thread is free to compile).
 */
export function childV8Flags(cores: number): string[] {
  return cores <= 2 ? ['--no-concurrent-recompilation'] : [];
}

/** The tool's own module, run in this process. */
function runHere(mainFile: string): void {
  // A computed path: esbuild leaves this require to Node, so dist/cli.js stays a few kilobytes and starts at once.
  const tool = require(mainFile) as { runCommandLine(argv: string[]): void };
  tool.runCommandLine(process.argv.slice(2));
}

if (require.main === module) {
  const mainFile = path.join(__dirname, 'cliMain.js');
  const childEnv = hugePageEnv(process.env, process.platform, process.argv[2]);
  if (!childEnv) {
    runHere(mainFile);
  } else {
    // Node's own flags (--cpu-prof, -r hook, --max-old-space-size) go to the child, which does the work, after ours.
    const flags = [...childV8Flags(availableParallelism()), ...process.execArgv];
    const child = spawnSync(process.execPath, [...flags, mainFile, ...process.argv.slice(2)], { stdio: 'inherit', env: childEnv });
    if (child.error) {
      runHere(mainFile); // could not start a process: the same run here, without huge pages
    } else if (child.signal) {
      process.kill(process.pid, child.signal); // end the way the child ended (Ctrl-C, a kill from a CI timeout)
    } else {
      process.exitCode = child.status ?? 2;
    }
  }
}

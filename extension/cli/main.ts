/**
 * `residuum`: the thin command-line shell around the core (report-contract.md).
 *   residuum analyze LOG [--anchors F] [--map F] [--reference F] [--reset-at T ...] [--json] [--out F] [--html F] [--md F] [--profile]
 *   residuum check LOG [same options] [--gate FILE] [--max-outliers N] [--min-inside95 X] [--max-rmse M]
 *                      [--max-settle-time S] [--baseline REPORT --tolerance P]
 *   residuum compare LOG_A LOG_B [LOG_C ...] [same options] [--align time|start] [--align-event KIND] [--json]
 * Exit status: 0 ok; 1 a `check` threshold failed; 2 unreadable input, bad argument, or `check` without threshold.
 * Every failure is one line on stderr, never a stack trace.
 */
import { analyzeFile, InputError, type AnalyzeFileOptions, type FileAnalysis } from '../node/analyzeFile';
import { parseVerbArgs, numberOption, UsageError } from './args';
import { formatSummary } from './summary';
import { runCheck, CHECK_OPTIONS } from './check';
import { runCompare, COMPARE_OPTIONS } from './compare';
import { runMonteCarlo } from './monteCarlo';
import { writeReportExports, assertAnalysable } from './export';
import { WriteError } from '../node/writeAtomic';
import type { StageTimes } from '../core/analyze';
import { IMU_PRESETS } from '../core/imu/presets';
import * as path from 'node:path';
import type { ParallelOptions } from '../node/parallelAnalysis';

/**
 * The stage worker's bundle, beside this one in dist/ (for the verbs that need only the report: the log is hashed and
 * its errors stage run on the second core; without the file, e.g. when run from the sources, all runs on one thread).
 */
export function stageWorkerOptions(): ParallelOptions {
  return { workerFile: path.join(__dirname, 'stageWorker.js') };
}

const USAGE = `usage:
  residuum analyze LOG [options] [--json] [--out REPORT.json] [--html F] [--md F] [--profile]
  residuum check LOG [options] [--gate FILE] [--max-outliers N] [--min-inside95 X] [--max-rmse M] [--max-settle-time S]
                 [--baseline REPORT --tolerance P] [--json] [--out F] [--html F] [--md F]
  residuum compare LOG_A LOG_B [LOG_C ...] [options] [--align time|start] [--align-event KIND] [--json] [--out F] [--html F] [--md F]
  residuum montecarlo LOG_1 LOG_2 [...] | FOLDER [options] [--json] [--per-epoch]
options: --anchors F  --map F  --reference F  --confidence C  --gate-prob P  --window S
         --imu-preset consumer|industrial|tactical  --time-offset S  --memory-budget MIB (default 4096)
         --reset-at T (repeatable: a confirmed filter restart at T s; the notes sidecar's confirmed resets are added)
         --jump-factor F (covariance-jump candidates: a block's variance growing F-fold in one epoch, default 10)
exit: 0 ok; 1 a check threshold failed; 2 unreadable input, bad argument, or check without threshold`;

/** Analysis options from parsed values. */
export function analysisOptions(values: Record<string, unknown>, times?: StageTimes): AnalyzeFileOptions {
  const settings: AnalyzeFileOptions['settings'] = {};
  const confidence = numberOption(values, 'confidence', [0.5, 0.9999]);
  if (confidence !== undefined) settings.confidence = confidence;
  const window = numberOption(values, 'window', [1e-6, 1e9]);
  if (window !== undefined) settings.window_s = window;
  const gateProb = numberOption(values, 'gate-prob', [0.5, 1 - 1e-12]);
  if (gateProb !== undefined) settings.gate = gateProb;
  const offset = numberOption(values, 'time-offset');
  if (offset !== undefined) settings.timeOffset_s = offset;
  const budget = numberOption(values, 'memory-budget', [0.01, 1 << 24]);
  if (budget !== undefined) settings.memoryBudgetBytes = budget * 1024 * 1024;
  const resetAt = values['reset-at'];
  if (resetAt !== undefined) {
    const list = Array.isArray(resetAt) ? resetAt : [resetAt];
    settings.confirmedResets_s = list.map((raw) => {
      const v = Number(raw);
      if (typeof raw !== 'string' || raw.trim() === '' || !Number.isFinite(v)) throw new UsageError(`--reset-at needs a time in seconds, got '${String(raw)}'`);
      return v;
    });
  }
  const jump = numberOption(values, 'jump-factor', [1.0001, 1e12]);
  if (jump !== undefined) settings.covarianceJumpFactor = jump;
  const preset = values['imu-preset'];
  if (typeof preset === 'string') {
    if (!Object.hasOwn(IMU_PRESETS, preset)) throw new UsageError(`--imu-preset must be one of ${Object.keys(IMU_PRESETS).join(', ')}, got '${preset}'`);
    settings.imuPreset = preset;
  }
  return {
    map: values.map as string | undefined,
    anchors: values.anchors as string | undefined,
    reference: values.reference as string | undefined,
    settings,
    times,
  };
}

export { writeAtomic } from '../node/writeAtomic';

async function analyzeVerb(argv: string[]): Promise<number> {
  const { values, positionals } = parseVerbArgs(argv, {});
  if (values.help) {
    process.stdout.write(USAGE + '\n');
    return 0;
  }
  if (positionals.length !== 1) throw new UsageError(`analyze takes exactly one LOG, got ${positionals.length}`);
  const times: StageTimes = {};
  const t0 = performance.now();
  // --html draws the series, which the two-thread analysis does not bring back from its worker
  const options: AnalyzeFileOptions = { ...analysisOptions(values, times), ...(values.html === undefined ? { parallel: stageWorkerOptions() } : {}) };
  const result: FileAnalysis = await analyzeFile(positionals[0], options);
  const t1 = performance.now();
  const json = values.json ? JSON.stringify(result.report, null, 2) + '\n' : '';
  assertAnalysable(result.report);
  writeReportExports(values, result.report, result.series);
  times.serialize = performance.now() - t1;
  if (values.json) process.stdout.write(json);
  else process.stdout.write(formatSummary(result.report));
  if (values.profile) {
    times.total = performance.now() - t0;
    const parts = Object.entries(times).map(([k, v]) => `${k}=${v.toFixed(1)}ms`);
    process.stderr.write(`profile: ${parts.join(' ')}\n`);
    const p = result.parallel;
    if (p) {
      const sha = `sha256 computed in the ${p.hashIn === 'worker' ? 'worker while the log was parsed' : `main thread${p.hashWhy !== undefined ? ` (${p.hashWhy})` : ''}`}`;
      process.stderr.write(p.errorsIn === 'worker'
        ? `parallel: errors ran in the stage worker beside resets, channels, bias and uwb (errors=${p.errors_ms.toFixed(1)}ms there; this thread waited ${p.wait_ms.toFixed(1)}ms for it); ${sha}\n`
        : `parallel: every stage ran on the main thread (${p.why ?? 'no reason given'}); ${sha}\n`);
    }
  }
  return 0;
}

/** Entry point: returns the exit status. */
export async function main(argv: string[]): Promise<number> {
  const [verb, ...rest] = argv;
  try {
    switch (verb) {
      case 'analyze':
        return await analyzeVerb(rest);
      case 'check': {
        const { values, positionals } = parseVerbArgs(rest, CHECK_OPTIONS);
        if (values.help) {
          process.stdout.write(USAGE + '\n');
          return 0;
        }
        // --html draws the series, which the two-thread analysis does not bring back from its worker
        return await runCheck(values, positionals, { ...analysisOptions(values), ...(values.html === undefined ? { parallel: stageWorkerOptions() } : {}) });
      }
      case 'compare': {
        const { values, positionals } = parseVerbArgs(rest, COMPARE_OPTIONS);
        if (values.help) {
          process.stdout.write(USAGE + '\n');
          return 0;
        }
        return await runCompare(values, positionals, analysisOptions(values));
      }
      case 'montecarlo': {
        const { values, positionals } = parseVerbArgs(rest, { 'per-epoch': { type: 'boolean' } });
        if (values.help) {
          process.stdout.write(USAGE + '\n');
          return 0;
        }
        return await runMonteCarlo(values, positionals, analysisOptions(values));
      }
      case undefined:
      case '--help':
      case '-h':
      case 'help':
        process.stdout.write(USAGE + '\n');
        return verb === undefined ? 2 : 0;
      case '--version':
        process.stdout.write('0.1.0\n');
        return 0;
      default:
        throw new UsageError(`unknown command '${verb}' (expected analyze, check, compare or montecarlo)`);
    }
  } catch (e) {
    if (e instanceof UsageError || e instanceof InputError || e instanceof WriteError) {
      process.stderr.write(`residuum: ${e.message}\n`);
      return 2;
    }
    const err = e as NodeJS.ErrnoException;
    if (err && typeof err.code === 'string') {
      process.stderr.write(`residuum: cannot read input (${err.code}): ${err.message.split('\n')[0]}\n`);
      return 2;
    }
    process.stderr.write(`residuum: internal error: ${(e as Error)?.message?.split('\n')[0] ?? String(e)}\n`);
    return 2;
  }
}

/** Run the tool on `argv` (without `node` and the script) as the `residuum` command: output, exit status. */
export function runCommandLine(argv: string[]): void {
  // A closed pipe (`residuum ... | head`) ends the output quietly, not with a stack trace.
  process.stdout.on('error', (e: NodeJS.ErrnoException) => {
    if (e.code === 'EPIPE') process.exit(process.exitCode ?? 0);
  });
  main(argv).then(
    (code) => {
      process.exitCode = code;
    },
    (e) => {
      process.stderr.write(`residuum: internal error: ${String(e).split('\n')[0]}\n`);
      process.exitCode = 2;
    },
  );
}

// Run directly (`node dist/cliMain.js`, or a test's own bundle of this file); dist/cli.js (launch.ts) loads it with a code
// cache instead and calls runCommandLine itself.
if (require.main === module) runCommandLine(process.argv.slice(2));

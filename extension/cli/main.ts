/**
 * `residuum`: the thin command-line shell around the core (report-contract.md).
 *   residuum analyze LOG [--anchors F] [--map F] [--reference F] [--json] [--out F] [--profile]
 *   residuum check LOG [same options] [--gate FILE] [--max-outliers N] [--min-inside95 X] [--max-rmse M]
 *                      [--baseline REPORT --tolerance P]
 *   residuum compare LOG_A LOG_B [LOG_C ...] [same options] [--json]
 * Exit status: 0 ok; 1 a `check` threshold failed; 2 unreadable input, bad argument, or `check` without threshold.
 * Every failure is one line on stderr, never a stack trace.
 */
import { writeFileSync, renameSync } from 'node:fs';
import { analyzeFile, InputError, type AnalyzeFileOptions, type FileAnalysis } from '../node/analyzeFile';
import { parseVerbArgs, numberOption, UsageError } from './args';
import { formatSummary } from './summary';
import { runCheck, CHECK_OPTIONS } from './check';
import { runCompare } from './compare';
import type { StageTimes } from '../core/analyze';

const USAGE = `usage:
  residuum analyze LOG [--anchors F] [--map F] [--reference F] [--json] [--out F] [--profile]
  residuum check LOG [options] [--gate FILE] [--max-outliers N] [--min-inside95 X] [--max-rmse M] [--baseline REPORT --tolerance P]
  residuum compare LOG_A LOG_B [LOG_C ...] [options] [--json]
options: --confidence C  --gate-prob P  --window S  --imu-preset consumer|industrial|tactical  --time-offset S`;

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
  if (typeof values['imu-preset'] === 'string') settings.imuPreset = values['imu-preset'];
  return {
    map: values.map as string | undefined,
    anchors: values.anchors as string | undefined,
    reference: values.reference as string | undefined,
    settings,
    times,
  };
}

/** Write a file atomically (temporary file, then rename), so a crash never leaves half a report. */
export function writeAtomic(file: string, text: string): void {
  const tmp = `${file}.tmp-${process.pid}`;
  writeFileSync(tmp, text);
  renameSync(tmp, file);
}

async function analyzeVerb(argv: string[]): Promise<number> {
  const { values, positionals } = parseVerbArgs(argv, {});
  if (values.help) {
    process.stdout.write(USAGE + '\n');
    return 0;
  }
  if (positionals.length !== 1) throw new UsageError(`analyze takes exactly one LOG, got ${positionals.length}`);
  const times: StageTimes = {};
  const t0 = performance.now();
  const result: FileAnalysis = await analyzeFile(positionals[0], analysisOptions(values, times));
  const t1 = performance.now();
  const json = JSON.stringify(result.report, null, 2) + '\n';
  times.serialize = performance.now() - t1;
  if (typeof values.out === 'string') writeAtomic(values.out, json);
  if (values.json) process.stdout.write(json);
  else process.stdout.write(formatSummary(result.report));
  if (values.profile) {
    times.total = performance.now() - t0;
    const parts = Object.entries(times).map(([k, v]) => `${k}=${v.toFixed(1)}ms`);
    process.stderr.write(`profile: ${parts.join(' ')}\n`);
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
        return await runCheck(values, positionals, analysisOptions(values));
      }
      case 'compare': {
        const { values, positionals } = parseVerbArgs(rest, {});
        return await runCompare(values, positionals, analysisOptions(values));
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
        throw new UsageError(`unknown command '${verb}' (expected analyze, check or compare)`);
    }
  } catch (e) {
    if (e instanceof UsageError || e instanceof InputError) {
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

if (require.main === module) {
  main(process.argv.slice(2)).then(
    (code) => {
      process.exitCode = code;
    },
    (e) => {
      process.stderr.write(`residuum: internal error: ${String(e).split('\n')[0]}\n`);
      process.exitCode = 2;
    },
  );
}

/**
 * `residuum check`: analyse a log and hold its report to thresholds (command line, gate file) and optionally to a
 * stored baseline report. Exit 0 when all hold, 1 when one fails, 2 for bad input or no threshold at all.
 */
import { readFileSync } from 'node:fs';
import Ajv from 'ajv';
import { parse as parseJsonc, printParseErrorCode, type ParseError } from 'jsonc-parser';
import gateSchema from '../../schema/gate.schema.json';
import { analyzeFile, assertReadableFile, InputError, type AnalyzeFileOptions } from '../node/analyzeFile';
import { evaluateGate, compareWithBaseline, hasThresholds, type Gate, type GateResult } from '../core/gate';
import { REPORT_SCHEMA, type Report } from '../core/report';
import { writeReportExports, assertAnalysable } from './export';
import { numberOption, UsageError } from './args';
import { table } from './summary';

/** Options only `check` takes. */
export const CHECK_OPTIONS = {
  gate: { type: 'string' },
  'max-outliers': { type: 'string' },
  'min-inside95': { type: 'string' },
  'max-rmse': { type: 'string' },
  'max-settle-time': { type: 'string' },
  baseline: { type: 'string' },
  tolerance: { type: 'string' },
} as const;

/** Read and validate a JSON file; InputError with file and position on failure. */
export function readJsonFile(file: string, what: string): unknown {
  assertReadableFile(file, what);
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (e) {
    throw new InputError(`${what} cannot be read: ${file} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
  try {
    return JSON.parse(text);
  } catch (e) {
    // V8 does not always say where; the strict JSON scan of jsonc-parser does (offset of the first error).
    const errors: ParseError[] = [];
    parseJsonc(text, errors, { disallowComments: true, allowTrailingComma: false, allowEmptyContent: false });
    const first = errors[0];
    let where = '';
    let why = (e as Error).message.split('\n')[0];
    if (first) {
      const before = text.slice(0, first.offset);
      const line = before.split('\n').length;
      const column = first.offset - before.lastIndexOf('\n');
      where = `:${line}:${column}`;
      why = printParseErrorCode(first.error);
    }
    throw new InputError(`${what} ${file}${where} is not valid JSON: ${why}`);
  }
}

/** Load a gate file and validate it against schema/gate.schema.json. */
export function loadGate(file: string): Gate {
  const data = readJsonFile(file, 'gate file');
  const ajv = new Ajv({ allErrors: true });
  const validate = ajv.compile(gateSchema);
  if (!validate(data)) {
    const e = validate.errors?.[0];
    const where = e?.instancePath ? ` at ${e.instancePath}` : '';
    throw new InputError(`gate file ${file} is malformed${where}: ${e?.message ?? 'invalid'}${e?.params && 'additionalProperty' in e.params ? ` ('${String(e.params.additionalProperty)}')` : ''}`);
  }
  return data as Gate;
}

/** Run the verb; returns the exit status. */
export async function runCheck(values: Record<string, unknown>, positionals: string[], options: AnalyzeFileOptions): Promise<number> {
  if (positionals.length !== 1) throw new UsageError(`check takes exactly one LOG, got ${positionals.length}`);
  const gate: Gate = typeof values.gate === 'string' ? loadGate(values.gate) : {};
  const maxOutliers = numberOption(values, 'max-outliers', [0, Number.MAX_SAFE_INTEGER]);
  if (maxOutliers !== undefined && !Number.isInteger(maxOutliers)) throw new UsageError(`--max-outliers needs a whole number, got ${maxOutliers}`);
  if (maxOutliers !== undefined) gate.maxOutliers = maxOutliers;
  const minInside = numberOption(values, 'min-inside95', [0, 1]);
  if (minInside !== undefined) gate.minInside95 = minInside;
  const maxRmse = numberOption(values, 'max-rmse', [0, Number.MAX_VALUE]);
  if (maxRmse !== undefined) gate.maxRmse_m = maxRmse;
  const maxSettle = numberOption(values, 'max-settle-time', [0, Number.MAX_VALUE]);
  if (maxSettle !== undefined) gate.maxSettleTime_s = maxSettle;
  const tolerance = numberOption(values, 'tolerance', [0, 1e6]);
  const baselineFile = values.baseline as string | undefined;
  if (baselineFile !== undefined && tolerance === undefined) throw new UsageError('--baseline needs --tolerance P (percent)');
  if (tolerance !== undefined && baselineFile === undefined) throw new UsageError('--tolerance needs --baseline REPORT');
  if (!hasThresholds(gate) && baselineFile === undefined) {
    throw new UsageError('check needs at least one threshold (--gate FILE, --max-outliers, --min-inside95, --max-rmse, --max-settle-time, or --baseline with --tolerance)');
  }
  const baseline = baselineFile ? (readJsonFile(baselineFile, 'baseline report') as Report) : undefined;
  if (baseline !== undefined) {
    const b = baseline as unknown;
    const isReport = b !== null && typeof b === 'object' && (b as Report).schema === REPORT_SCHEMA && Array.isArray((b as Report).channels);
    if (!isReport) throw new InputError(`baseline report ${baselineFile} is not a ${REPORT_SCHEMA} report (write one with: residuum analyze LOG --out REPORT.json)`);
  }

  const { report, series } = await analyzeFile(positionals[0], options);
  assertAnalysable(report);
  writeReportExports(values, report, series);
  const results: GateResult[] = [...evaluateGate(report, gate), ...(baseline ? compareWithBaseline(report, baseline, tolerance ?? 0) : [])];
  const failed = results.filter((r) => !r.pass);
  if (values.json) {
    process.stdout.write(JSON.stringify({ pass: failed.length === 0, results }, null, 2) + '\n');
  } else {
    process.stdout.write(`residuum check: ${report.source.path} (sha256 ${report.source.sha256?.slice(0, 12) ?? '-'})${baseline ? ` against baseline ${baselineFile} (${baseline.source?.path ?? '?'}, tolerance ${tolerance}%)` : ''}\n`);
    process.stdout.write(table(['', 'check'], results.map((r) => [r.pass ? 'PASS' : 'FAIL', r.message])));
    process.stdout.write(`${results.length - failed.length} passed, ${failed.length} failed\n`);
  }
  if (failed.length > 0) {
    process.stderr.write(`residuum: check failed: ${failed.map((f) => f.what).join('; ')}\n`);
    return 1;
  }
  return 0;
}

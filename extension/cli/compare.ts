/**
 * `residuum compare LOG_A LOG_B [...]`: analyse each run, align them on one time axis (`--align time|start`, or
 * `--align-event KIND`: the first finding of that kind), compare the figures on the common span (stated in the
 * output) and print them side by side, or the comparison JSON (`--json`, `--out F`), the HTML (`--html F`, with
 * the overlay charts) and the Markdown summary (`--md F`).
 */
import { analyzeFile, InputError, type AnalyzeFileOptions } from '../node/analyzeFile';
import { resolveSettings, type AnalysisSettings } from '../core/settings';
import { compareRuns, type AnalysedRun } from '../core/compareRuns';
import { spanSentence, comparisonTable, comparisonRuns } from '../core/export/html';
import { winCounts, runLabel, type AlignMode } from '../core/compare';
import type { FindingKind } from '../core/model';
import { UsageError } from './args';
import { table } from './summary';
import { writeComparisonExports, assertAnalysable } from './export';

/** Options only `compare` takes. */
export const COMPARE_OPTIONS = {
  align: { type: 'string' },
  'align-event': { type: 'string' },
} as const;

/** Finding kinds an event alignment accepts (report contract v1). */
const EVENT_KINDS: readonly FindingKind[] = [
  'outlier', 'inconsistent', 'not-white', 'innovation-bias', 'bias-step', 'bias-drift', 'time-gap', 'time-backwards',
  'bad-rotation', 'bad-covariance', 'bad-value', 'parse-error', 'suspect-anchor', 'too-few-anchors', 'high-dop',
];

/** The alignment mode from `--align` / `--align-event`; UsageError for a bad value or both given. */
export function alignOption(values: Record<string, unknown>): AlignMode {
  const by = values.align;
  const event = values['align-event'];
  if (typeof event === 'string') {
    if (by !== undefined && by !== 'event') throw new UsageError(`--align ${String(by)} and --align-event cannot be used together`);
    if (!(EVENT_KINDS as readonly string[]).includes(event)) throw new UsageError(`--align-event needs a finding kind (${EVENT_KINDS.join(', ')}), got '${event}'`);
    return { by: 'event', kind: event };
  }
  if (by === undefined || by === 'time') return { by: 'time' };
  if (by === 'start') return { by: 'start' };
  if (by === 'event') throw new UsageError('--align event needs --align-event KIND');
  throw new UsageError(`--align must be time or start (or use --align-event KIND), got '${String(by)}'`);
}

/** Run the verb; returns the exit status. */
export async function runCompare(values: Record<string, unknown>, positionals: string[], options: AnalyzeFileOptions): Promise<number> {
  if (positionals.length < 2) throw new UsageError(`compare takes two or more logs, got ${positionals.length}`);
  const align = alignOption(values);
  const runs: AnalysedRun[] = [];
  const settings: AnalysisSettings[] = [];
  for (const p of positionals) {
    const opts = options;
    const a = await analyzeFile(p, opts);
    assertAnalysable(a.report);
    runs.push(a);
    settings.push(resolveSettings({ ...opts.settings, ...(typeof a.report.settings.map === 'string' ? { map: a.report.settings.map } : {}) }));
  }
  const result = compareRuns(runs, settings, align);
  if (!result.ok) throw new InputError(`cannot compare: ${result.message}`);
  const c = result.comparison;
  writeComparisonExports(values, c);
  if (values.json) {
    process.stdout.write(JSON.stringify(c, null, 2) + '\n');
    return 0;
  }
  process.stdout.write(table(['run', 'input', 'SHA-256', 'window (own time)', 'whole run'], comparisonRuns(c).map((r) => [r[0], r[1], (r[2] ?? '').slice(0, 12), r[3], r[4]])));
  process.stdout.write(spanSentence(c) + '\n\n');
  const t = comparisonTable(c);
  process.stdout.write(table(t.header, t.rows));
  const wins = winCounts(c.figures, c.runs.length);
  process.stdout.write(`best in the most figures: ${wins.map((w, i) => `${runLabel(i)} ${w}`).join(', ')}\n`);
  return 0;
}

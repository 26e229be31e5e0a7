/**
 * `--out F`, `--html F`, `--md F` of the verbs: the report JSON, the self-contained HTML report and the Markdown
 * summary, each written atomically. The notes come with the report
 * (analyzeFile anchors the log's `LOG.notes.json`).
 */
import type { Report } from '../core/report';
import type { Series } from '../core/series';
import type { Comparison } from '../core/compareRuns';
import { renderReportHtml, renderComparisonHtml } from '../core/export/html';
import { renderReportMarkdown, renderComparisonMarkdown } from '../core/export/markdown';
import { writeAtomic } from '../node/writeAtomic';
import { InputError } from '../node/analyzeFile';

/**
 * Throw InputError when a log gave nothing to analyse (no estimator epoch, no channel update, no IMU or UWB block):
 * a binary or foreign file must not pass a CI gate with zero outliers. Names the first reader problem.
 */
export function assertAnalysable(report: Report): void {
  const updates = report.channels.reduce((s, c) => s + c.updates, 0);
  if (report.time.epochs > 0 || updates > 0 || report.imu !== undefined || report.uwb !== undefined) return;
  const first = report.findings.find((f) => f.kind === 'parse-error' || f.severity === 'error');
  const where = first ? `${first.file ?? report.source.path}${first.line !== undefined ? `:${first.line}` : ''}${first.column !== undefined ? `:${first.column}` : ''}: ${first.message}` : 'no estimator state, update or IMU records found';
  throw new InputError(`log ${report.source.path} cannot be read as an estimator log (${where})`);
}

/** Write the exports a verb was asked for (`--out`, `--html`, `--md`) of one report. */
export function writeReportExports(values: Record<string, unknown>, report: Report, series: Series[]): void {
  if (typeof values.out === 'string') writeAtomic(values.out, JSON.stringify(report, null, 2) + '\n');
  if (typeof values.html === 'string') writeAtomic(values.html, renderReportHtml(report, series, { exportedAt: new Date().toISOString() }));
  if (typeof values.md === 'string') writeAtomic(values.md, renderReportMarkdown(report));
}

/** Write the exports of a comparison (`--out` is the comparison JSON). */
export function writeComparisonExports(values: Record<string, unknown>, comparison: Comparison): void {
  if (typeof values.out === 'string') writeAtomic(values.out, JSON.stringify(comparison, null, 2) + '\n');
  if (typeof values.html === 'string') writeAtomic(values.html, renderComparisonHtml(comparison, { exportedAt: new Date().toISOString() }));
  if (typeof values.md === 'string') writeAtomic(values.md, renderComparisonMarkdown(comparison));
}

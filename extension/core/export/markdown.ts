/**
 * The Markdown summary for a pull-request comment: identity (tool version, input name, hash), the figures, the notes
 * and the findings, compact. Every text from a log is escaped (escape.ts) so it renders as text.
 */
import type { Report } from '../report';
import type { Comparison } from '../compareRuns';
import { runLabel, winCounts } from '../compare';
import { escapeMarkdown, baseName } from './escape';
import { identityRows, channelTable, errorTable, segmentTable, anchorTable, findingTable, noteTable, type TextTable } from './figures';
import { comparisonTable, comparisonRuns, spanSentence } from './html';

function tableMd(t: TextTable): string {
  if (t.rows.length === 0) return '';
  const cell = (s: string): string => escapeMarkdown(s) || ' ';
  const lines = [
    `#### ${escapeMarkdown(t.title)}`,
    '',
    `| ${t.header.map(cell).join(' | ')} |`,
    `| ${t.header.map(() => '---').join(' | ')} |`,
    ...t.rows.map((r) => `| ${r.map(cell).join(' | ')} |`),
  ];
  if (t.omitted) lines.push('', `${t.omitted} more not listed\\.`);
  return lines.join('\n') + '\n';
}

/** Options of a Markdown export. */
export interface MarkdownOptions {
  /** Most findings listed (default 30: a comment stays readable). */
  maxFindings?: number;
}

/** The Markdown summary of one run. */
export function renderReportMarkdown(report: Report, options: MarkdownOptions = {}): string {
  const ident = identityRows(report).map(([k, v]) => `- **${escapeMarkdown(k)}**: ${escapeMarkdown(v)}`);
  const counts = new Map<string, number>();
  for (const f of report.findings) counts.set(f.kind, (counts.get(f.kind) ?? 0) + 1);
  const parts = [
    `### Residuum report: ${escapeMarkdown(baseName(report.source.path))}`,
    '',
    ...ident,
    '',
    `Findings: ${report.findings.length}${counts.size ? ' (' + [...counts].map(([k, n]) => `${escapeMarkdown(k)} ${n}`).join(', ') + ')' : ''}`,
    '',
    tableMd(channelTable(report)),
    tableMd(errorTable(report)),
    tableMd(segmentTable(report)),
    tableMd(anchorTable(report)),
    tableMd(noteTable(report)),
    tableMd(findingTable(report, options.maxFindings ?? 30)),
  ];
  return parts.filter((p, i) => p !== '' || parts[i - 1] !== '').join('\n').replace(/\n{3,}/g, '\n\n').trimEnd() + '\n';
}

/** The Markdown summary of a comparison. */
export function renderComparisonMarkdown(c: Comparison, options: MarkdownOptions = {}): string {
  const wins = winCounts(c.figures, c.runs.length);
  const parts = [
    `### Residuum comparison (Residuum ${escapeMarkdown(c.tool.version)})`,
    '',
    escapeMarkdown(spanSentence(c)),
    '',
    tableMd({ title: 'Runs', header: ['run', 'input', 'SHA-256', 'window (own time)', 'whole run'], rows: comparisonRuns(c) }),
    tableMd(comparisonTable(c)),
    `Best in the most figures: ${wins.map((w, i) => `run ${runLabel(i)} ${w}`).join(', ')}\\.`,
    '',
    ...c.reports.map((r, i) => tableMd({ ...noteTable(r), title: `Run ${runLabel(i)}: notes (${r.notes.length})` })),
    ...c.reports.map((r, i) => tableMd({ ...findingTable(r, options.maxFindings ?? 15), title: `Run ${runLabel(i)}: findings (${r.findings.length})` })),
  ];
  return parts.join('\n').replace(/\n{3,}/g, '\n\n').trimEnd() + '\n';
}

/**
 * The self-contained HTML report: one file, charts as inline SVG, no script and no network. A strict
 * Content-Security-Policy (`default-src 'none'`, only the inline style sheet allowed) makes sure nothing in it runs
 * or loads even if some text slipped through; every text from a log is escaped (escape.ts) anyway.
 */
import type { Report } from '../report';
import type { Series } from '../series';
import type { Comparison } from '../compareRuns';
import { alignName } from '../compareRuns';
import { runLabel, winCounts } from '../compare';
import { svgChart, type ChartSpec } from './svg';
import { escapeHtml, fmtNum, baseName } from './escape';
import { identityRows, channelTable, errorTable, segmentTable, anchorTable, findingTable, noteTable, worstTable, reportCharts, type TextTable } from './figures';

/** The Content-Security-Policy of every exported HTML report. */
export const REPORT_CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; base-uri 'none'; form-action 'none'";

const STYLE = `
body { font: 14px/1.45 system-ui, sans-serif; color: #212529; background: #fff; margin: 1.5rem auto; max-width: 60rem; padding: 0 1rem; }
h1 { font-size: 1.4rem; } h2 { font-size: 1.15rem; margin-top: 1.8rem; border-bottom: 1px solid #dee2e6; }
table { border-collapse: collapse; margin: .5rem 0; font-variant-numeric: tabular-nums; }
th, td { border: 1px solid #dee2e6; padding: .2rem .5rem; text-align: left; vertical-align: top; }
th { background: #f1f3f5; }
td.msg { max-width: 32rem; overflow-wrap: anywhere; }
svg.chart { display: block; width: 100%; height: auto; margin: .6rem 0; }
.better { font-weight: bold; }
.note { color: #495057; }
`;

/** Options of an HTML export. */
export interface HtmlOptions {
  /** Most findings listed (default 500). */
  maxFindings?: number;
  /** When the report was exported (ISO 8601), shown when given. */
  exportedAt?: string;
}

function tableHtml(t: TextTable, messageColumn = -1): string {
  if (t.rows.length === 0) return '';
  const head = t.header.map((h) => `<th scope="col">${escapeHtml(h)}</th>`).join('');
  const body = t.rows
    .map((row) => `<tr>${row.map((c, i) => `<td${i === messageColumn ? ' class="msg"' : ''}>${escapeHtml(c)}</td>`).join('')}</tr>`)
    .join('\n');
  const more = t.omitted ? `<p class="note">${t.omitted} more not listed (see the JSON report).</p>` : '';
  return `<h2>${escapeHtml(t.title)}</h2>\n<table>\n<thead><tr>${head}</tr></thead>\n<tbody>\n${body}\n</tbody>\n</table>\n${more}`;
}

function page(title: string, body: string): string {
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="${escapeHtml(REPORT_CSP)}">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="Residuum">
<title>${escapeHtml(title)}</title>
<style>${STYLE}</style>
</head>
<body>
${body}
</body>
</html>
`;
}

function identityHtml(rows: string[][]): string {
  return `<table class="identity">\n<tbody>\n${rows.map(([k, v]) => `<tr><th scope="row">${escapeHtml(k)}</th><td class="msg">${escapeHtml(v)}</td></tr>`).join('\n')}\n</tbody>\n</table>`;
}

function chartsHtml(charts: ChartSpec[]): string {
  if (charts.length === 0) return '';
  return `<h2>Charts</h2>\n${charts.map((c) => `<figure>${svgChart(c)}</figure>`).join('\n')}`;
}

/** The HTML report of one run (identity, figures, notes, findings, worst updates, charts). */
export function renderReportHtml(report: Report, series: Series[], options: HtmlOptions = {}): string {
  const name = baseName(report.source.path);
  const ident = identityRows(report);
  if (options.exportedAt) ident.push(['exported', options.exportedAt]);
  const body = [
    `<h1>Residuum report: ${escapeHtml(name)}</h1>`,
    identityHtml(ident),
    tableHtml(channelTable(report)),
    tableHtml(errorTable(report)),
    tableHtml(segmentTable(report)),
    tableHtml(anchorTable(report), 5),
    tableHtml(noteTable(report), 4),
    tableHtml(findingTable(report, options.maxFindings ?? 500), 5),
    tableHtml(worstTable(report, 20)),
    chartsHtml(reportCharts(series)),
    `<p class="note">Residuum is an analysis aid; it does not certify an estimator for any use.</p>`,
  ].filter((s) => s !== '');
  return page(`Residuum report: ${name}`, body.join('\n'));
}

/** Figures of a comparison as a table: one column per run (value and difference to run A) and the better run. */
export function comparisonTable(c: Comparison): TextTable {
  return {
    title: 'Figures on the common span',
    header: ['figure', ...c.runs.map((r) => r.label), 'better'],
    rows: c.figures.map((f) => [
      f.what + (f.unit ? ` [${f.unit}]` : '') + (f.rule === 'closer' ? ` (best near ${fmtNum(f.target)})` : ''),
      ...f.values.map((v, i) => (v === null ? '-' : fmtNum(v)) + (i > 0 && f.deltas[i] !== null ? ` (${(f.deltas[i] as number) >= 0 ? '+' : ''}${fmtNum(f.deltas[i])})` : '')),
      f.best !== undefined ? runLabel(f.best) : '-',
    ]),
  };
}

/** Identity rows of the runs of a comparison. */
export function comparisonRuns(c: Comparison): string[][] {
  return c.runs.map((r) => [
    r.label,
    r.path,
    r.sha256 ?? 'not computed',
    `${fmtNum(r.window[0])} .. ${fmtNum(r.window[1])} s${r.cropped ? ' (cropped)' : ''}`,
    r.fullSpan ? `${fmtNum(r.fullSpan[0])} .. ${fmtNum(r.fullSpan[1])} s` : '-',
  ]);
}

/** A sentence stating the common span and the alignment. */
export function spanSentence(c: Comparison): string {
  return `Aligned by ${alignName(c.align)}; figures computed on the common span ${fmtNum(c.span.start)} .. ${fmtNum(c.span.end)} s (${fmtNum(c.span.end - c.span.start)} s) of the common time axis.`;
}

/** The HTML comparison of two or more runs: identity of each, the figures side by side, the overlays. */
export function renderComparisonHtml(c: Comparison, options: HtmlOptions = {}): string {
  const wins = winCounts(c.figures, c.runs.length);
  const runs: TextTable = { title: 'Runs', header: ['run', 'input', 'SHA-256', 'window (own time)', 'whole run'], rows: comparisonRuns(c) };
  const charts: ChartSpec[] = c.overlays.map((o) => ({
    title: `${o.label}: runs overlaid`,
    unit: o.unit,
    xLabel: 'common time [s]',
    lines: o.runs.map((r) => ({ label: `run ${runLabel(r.run)}`, x: r.x, y: r.y })),
  }));
  const body = [
    `<h1>Residuum comparison: ${c.runs.map((r) => escapeHtml(baseName(r.path))).join(' vs ')}</h1>`,
    identityHtml([['tool', `Residuum ${c.tool.version}`], ['alignment', spanSentence(c)], ...(options.exportedAt ? [['exported', options.exportedAt]] : [])]),
    tableHtml(runs, 1),
    tableHtml(comparisonTable(c)),
    `<p>Best in the most figures: ${wins.map((w, i) => `run ${runLabel(i)} ${w}`).join(', ')}.</p>`,
    chartsHtml(charts),
    ...c.reports.map((r, i) => tableHtml({ ...findingTable(r, options.maxFindings ?? 100), title: `Run ${runLabel(i)}: findings (${r.findings.length})` }, 5)),
    ...c.reports.map((r, i) => tableHtml({ ...noteTable(r), title: `Run ${runLabel(i)}: notes (${r.notes.length})` }, 4)),
  ].filter((s) => s !== '');
  return page(`Residuum comparison of ${c.runs.length} runs`, body.join('\n'));
}

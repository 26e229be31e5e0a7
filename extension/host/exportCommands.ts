/**
 * Panel commands of the report export, the run comparison and the Monte Carlo check:
 * - `residuum.exportReport [format] [target]`: the current analysis as the self-contained HTML report or the Markdown
 *   summary (core/export), to a file chosen in a save dialog (or `target`), written atomically.
 * - `residuum.compareRuns`: logs compared on their common span in the analysis panel's compare view.
 * - `residuum.exportComparison [format] [target]`: the compare view's comparison as HTML or Markdown.
 * - `residuum.monteCarlo`: N runs of one scenario (a folder or several logs) in the panel's Monte Carlo view.
 * The comparison and the Monte Carlo check run in the analysis worker thread (panel.ts), never on this thread.
 */
import * as path from 'node:path';
import * as vscode from 'vscode';
import type { Report } from '../core/report';
import type { Series } from '../core/series';
import { renderReportHtml, renderComparisonHtml } from '../core/export/html';
import { renderReportMarkdown, renderComparisonMarkdown } from '../core/export/markdown';
import { parseCompareAlign } from '../protocol';
import { writeAtomic } from '../node/writeAtomic';
import type { PanelManager } from './panels';
import { expandRunUris, pickCompareRuns, pickMonteCarloRuns, urisOfArgs } from './runsPick';

/** Command ids (package.json contributes them). */
export const EXPORT_REPORT_COMMAND = 'residuum.exportReport';
/** Command id of the comparison. */
export const COMPARE_RUNS_COMMAND = 'residuum.compareRuns';
/** Command id of the comparison's export (the compare view's buttons). */
export const EXPORT_COMPARISON_COMMAND = 'residuum.exportComparison';
/** Command id of the Monte Carlo check. */
export const MONTE_CARLO_COMMAND = 'residuum.monteCarlo';

/** Write text to a chosen file: atomically on the local disk, through the workspace file system elsewhere. */
async function save(target: vscode.Uri, text: string): Promise<void> {
  if (target.scheme === 'file') writeAtomic(target.fsPath, text);
  else await vscode.workspace.fs.writeFile(target, new TextEncoder().encode(text));
}

/** Ask where to save and write the HTML or the Markdown form, chosen by the file's extension. */
async function saveAs(base: vscode.Uri, stem: string, html: () => string, md: () => string, output: vscode.LogOutputChannel, prefer: 'html' | 'md' = 'html', given?: vscode.Uri): Promise<void> {
  const target = given ?? await vscode.window.showSaveDialog({
    title: 'Residuum: export the report',
    saveLabel: 'Export',
    defaultUri: vscode.Uri.joinPath(base, `${stem}.${prefer === 'md' ? 'md' : 'html'}`),
    filters: prefer === 'md' ? { 'Markdown summary': ['md'], 'HTML report': ['html'] } : { 'HTML report': ['html', 'htm'], 'Markdown summary': ['md'] },
  });
  if (!target) return;
  const markdown = /\.(md|markdown)$/i.test(target.path);
  try {
    await save(target, markdown ? md() : html());
    output.info(`exported ${target.toString()}`);
    void vscode.window.showInformationMessage(`Residuum: report written to ${path.posix.basename(target.path)}.`);
  } catch (e) {
    const message = e instanceof Error ? e.message : String(e);
    output.error(`export to ${target.toString()} failed: ${message}`);
    void vscode.window.showErrorMessage(`Residuum: ${message}`);
  }
}

/** The folder of a file URI (for the dialogs' default location). */
function folderOf(uri: vscode.Uri): vscode.Uri {
  return uri.with({ path: path.posix.dirname(uri.path) });
}

/** Export the current panel's analysis. */
async function exportReport(manager: PanelManager, output: vscode.LogOutputChannel, format: unknown, target?: vscode.Uri): Promise<void> {
  const panel = manager.current();
  const report: Report | undefined = panel?.report;
  const series: readonly Series[] | undefined = panel?.series;
  if (!panel || !report || !series) {
    void vscode.window.showInformationMessage('Residuum: open a log analysis first and wait for it to finish (Residuum: Open Log Analysis).');
    return;
  }
  const stem = `${path.posix.basename(panel.uri.path).replace(/\.[^.]+$/, '')}.report`;
  await saveAs(folderOf(panel.uri), stem, () => renderReportHtml(report, [...series], { exportedAt: new Date().toISOString() }), () => renderReportMarkdown(report), output, format === 'md' ? 'md' : 'html', target);
}

/**
 * Compare runs in the analysis panel's compare view: the first log's panel opens (or is revealed) and the others
 * are compared with it, analysed in the worker thread. From the explorer: the selected logs (one selected: the
 * dialog asks for the others); from the palette: the active panel's log and runs chosen in a dialog (no panel: two
 * or more logs chosen in a dialog). An alignment `{ by: 'time' | 'start' | 'event', kind }` may follow the URIs.
 */
async function compareCommand(manager: PanelManager, args: unknown[]): Promise<void> {
  let uris = urisOfArgs(args);
  const align = args.map(parseCompareAlign).find((a) => a !== undefined);
  let base = uris[0] ?? manager.current()?.uri;
  if (!base) {
    uris = await pickCompareRuns(undefined);
    base = uris[0];
    if (!base) return;
  }
  let others = uris.filter((u) => u.toString() !== base.toString());
  if (others.length === 0) others = await pickCompareRuns(base);
  if (others.length === 0) {
    void vscode.window.showInformationMessage('Residuum: choose one or more other runs to compare with this log.');
    return;
  }
  await manager.open(base).compareWith(others, align);
}

/**
 * Monte Carlo consistency of N runs of one scenario in the panel of the first run: from the explorer, a folder (its
 * logs) or several selected logs; from the palette, a folder or logs chosen in a dialog.
 */
async function monteCarloCommand(manager: PanelManager, args: unknown[]): Promise<void> {
  let uris = urisOfArgs(args);
  if (uris.length === 0) uris = await pickMonteCarloRuns(manager.current()?.uri);
  if (uris.length === 0) return;
  const runs = await expandRunUris(uris);
  if (runs.length < 2) {
    void vscode.window.showErrorMessage(`Residuum: a Monte Carlo check needs two or more runs of the same scenario; ${runs.length === 0 ? 'no logs were found' : 'one log was given'}.`);
    return;
  }
  await manager.open(runs[0]).monteCarlo(runs);
}

/** Export the comparison shown in the current panel's compare view. */
async function exportComparison(manager: PanelManager, output: vscode.LogOutputChannel, format: unknown, target?: vscode.Uri): Promise<void> {
  const panel = manager.current();
  const c = panel?.comparison;
  if (!panel || !c) {
    void vscode.window.showInformationMessage('Residuum: compare runs in the panel first (Add runs... in its Compare view).');
    return;
  }
  await saveAs(folderOf(panel.uri), 'comparison', () => renderComparisonHtml(c, { exportedAt: new Date().toISOString() }), () => renderComparisonMarkdown(c), output, format === 'md' ? 'md' : 'html', target);
}

/** Register the export and comparison commands. */
export function registerExportCommands(manager: PanelManager, output: vscode.LogOutputChannel): vscode.Disposable {
  return vscode.Disposable.from(
    vscode.commands.registerCommand(EXPORT_REPORT_COMMAND, (format?: unknown, target?: unknown) => exportReport(manager, output, format, target instanceof vscode.Uri ? target : undefined)),
    vscode.commands.registerCommand(EXPORT_COMPARISON_COMMAND, (format?: unknown, target?: unknown) => exportComparison(manager, output, format, target instanceof vscode.Uri ? target : undefined)),
    vscode.commands.registerCommand(COMPARE_RUNS_COMMAND, (...args: unknown[]) => compareCommand(manager, args)),
    vscode.commands.registerCommand(MONTE_CARLO_COMMAND, (...args: unknown[]) => monteCarloCommand(manager, args)),
  );
}

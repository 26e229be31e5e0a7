/**
 * Panel commands of the report export and the run comparison:
 * - `residuum.exportReport`: the current analysis as the self-contained HTML report or the Markdown summary
 *   (core/export), to a file chosen in a save dialog, written atomically.
 * - `residuum.compareRuns`: two or more logs chosen in an open dialog, compared on their common span
 *   (core/compareRuns), shown in a comparison view (the same self-contained HTML: tables and overlay charts, no
 *   script), with "Save HTML..." and "Save Markdown..." actions.
 * The comparison analyses the logs in the extension host (it needs the logs themselves to crop them to the common
 * span), under a cancellable progress notification.
 */
import * as path from 'node:path';
import * as vscode from 'vscode';
import type { Report } from '../core/report';
import type { Series } from '../core/series';
import { renderReportHtml, renderComparisonHtml } from '../core/export/html';
import { renderReportMarkdown, renderComparisonMarkdown } from '../core/export/markdown';
import { compareRuns, type AnalysedRun, type Comparison } from '../core/compareRuns';
import { resolveSettings } from '../core/settings';
import { analyzeFile } from '../node/analyzeFile';
import { writeAtomic } from '../node/writeAtomic';
import type { PanelManager } from './panels';

/** Command ids (package.json contributes them). */
export const EXPORT_REPORT_COMMAND = 'residuum.exportReport';
/** Command id of the comparison. */
export const COMPARE_RUNS_COMMAND = 'residuum.compareRuns';

/** Write text to a chosen file: atomically on the local disk, through the workspace file system elsewhere. */
async function save(target: vscode.Uri, text: string): Promise<void> {
  if (target.scheme === 'file') writeAtomic(target.fsPath, text);
  else await vscode.workspace.fs.writeFile(target, new TextEncoder().encode(text));
}

/** Ask where to save and write the HTML or the Markdown form, chosen by the file's extension. */
async function saveAs(base: vscode.Uri, stem: string, html: () => string, md: () => string, output: vscode.LogOutputChannel, prefer: 'html' | 'md' = 'html'): Promise<void> {
  const target = await vscode.window.showSaveDialog({
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
async function exportReport(manager: PanelManager, output: vscode.LogOutputChannel, format: unknown): Promise<void> {
  const panel = manager.current();
  const report: Report | undefined = panel?.report;
  const series: readonly Series[] | undefined = panel?.series;
  if (!panel || !report || !series) {
    void vscode.window.showInformationMessage('Residuum: open a log analysis first and wait for it to finish (Residuum: Open Log Analysis).');
    return;
  }
  const stem = `${path.posix.basename(panel.uri.path).replace(/\.[^.]+$/, '')}.report`;
  await saveAs(folderOf(panel.uri), stem, () => renderReportHtml(report, [...series], { exportedAt: new Date().toISOString() }), () => renderReportMarkdown(report), output, format === 'md' ? 'md' : 'html');
}

const COMPARE_VIEW_TYPE = 'residuum.comparison';

/** Show a comparison in a webview without scripts (the page's own CSP allows nothing but its inline style). */
function showComparison(c: Comparison, output: vscode.LogOutputChannel): void {
  const title = `Residuum: compare ${c.runs.map((r) => path.basename(r.path)).join(' vs ')}`;
  const panel = vscode.window.createWebviewPanel(COMPARE_VIEW_TYPE, title, vscode.ViewColumn.Beside, { enableScripts: false, localResourceRoots: [] });
  panel.webview.html = renderComparisonHtml(c);
  const base = vscode.Uri.file(path.dirname(c.runs[0].path));
  void vscode.window.showInformationMessage(`Residuum: ${c.runs.length} runs compared on their common span.`, 'Save HTML...', 'Save Markdown...').then((choice) => {
    if (!choice) return;
    return saveAs(base, 'comparison', () => renderComparisonHtml(c, { exportedAt: new Date().toISOString() }), () => renderComparisonMarkdown(c), output, choice === 'Save Markdown...' ? 'md' : 'html');
  });
}

/** Pick two or more logs, compare them aligned by start, show the comparison. */
async function compareCommand(output: vscode.LogOutputChannel, args: unknown[]): Promise<void> {
  // From the explorer: (clicked, all selected); from the palette: nothing.
  const given = Array.isArray(args[1]) ? (args[1] as unknown[]) : args;
  let uris = given.filter((a): a is vscode.Uri => a instanceof vscode.Uri);
  if (uris.length < 2) {
    const picked = await vscode.window.showOpenDialog({
      canSelectMany: true,
      openLabel: 'Compare',
      title: 'Residuum: choose two or more estimator logs to compare',
      filters: { 'Estimator logs': ['csv', 'jsonl', 'ndjson', 'json'], 'All files': ['*'] },
    });
    uris = picked ?? [];
  }
  if (uris.length < 2) {
    if (uris.length === 1) void vscode.window.showInformationMessage('Residuum: choose two or more logs to compare.');
    return;
  }
  const local = uris.filter((u) => u.scheme === 'file');
  if (local.length !== uris.length) {
    void vscode.window.showErrorMessage('Residuum reads logs from the local disk; other schemes are not supported yet.');
    return;
  }
  const alignPick = await vscode.window.showQuickPick(
    [
      { label: 'Start', description: 'each run from its first epoch', by: 'start' as const },
      { label: 'Log time', description: 'the logs share one clock', by: 'time' as const },
    ],
    { title: 'Residuum: align the runs by' },
  );
  if (!alignPick) return;
  await vscode.window.withProgress({ location: vscode.ProgressLocation.Notification, title: 'Residuum: comparing runs', cancellable: true }, async (progress, token) => {
    const controller = new AbortController();
    token.onCancellationRequested(() => controller.abort());
    const runs: AnalysedRun[] = [];
    try {
      for (const [i, u] of local.entries()) {
        progress.report({ message: `${i + 1} of ${local.length}: ${path.basename(u.fsPath)}`, increment: 100 / (local.length + 1) });
        runs.push(await analyzeFile(u.fsPath, { signal: controller.signal }));
      }
    } catch (e) {
      if (controller.signal.aborted) return;
      const message = e instanceof Error ? e.message : String(e);
      output.error(`comparison failed: ${message}`);
      void vscode.window.showErrorMessage(`Residuum: ${message}`);
      return;
    }
    const result = compareRuns(runs, runs.map(() => resolveSettings()), { by: alignPick.by });
    if (!result.ok) {
      void vscode.window.showErrorMessage(`Residuum: cannot compare: ${result.message}`);
      return;
    }
    showComparison(result.comparison, output);
  });
}

/** Register the export and comparison commands. */
export function registerExportCommands(manager: PanelManager, output: vscode.LogOutputChannel): vscode.Disposable {
  return vscode.Disposable.from(
    vscode.commands.registerCommand(EXPORT_REPORT_COMMAND, (format?: unknown) => exportReport(manager, output, format)),
    vscode.commands.registerCommand(COMPARE_RUNS_COMMAND, (...args: unknown[]) => compareCommand(output, args)),
  );
}

/**
 * The set of open analysis panels: one per log opened by command (revealed when opened again), plus those of the
 * read-only custom editor. Keeps the Problems panel and the status-bar item in step with them, and knows which
 * panel is active for the next/previous worst epoch commands.
 */
import * as vscode from 'vscode';
import type { WorstEntry } from '../core/report';
import { parsePersistedState, type ViewState } from '../protocol';
import { AnalysisPanel, type PanelHost } from './panel';
import { toProblems } from './problems';
import { headlineInside95 } from './ranking';

/** Manages every analysis panel of the extension. */
export class PanelManager implements PanelHost, vscode.WebviewPanelSerializer {
  private readonly byUri = new Map<string, AnalysisPanel>();
  private readonly editors = new Set<AnalysisPanel>();
  private active: AnalysisPanel | undefined;
  /** Column names of `unknown-column` diagnostics, by {@link unknownColumnKey} (read by the quick fix). */
  readonly unknownColumns = new Map<string, string>();

  constructor(
    readonly extensionUri: vscode.Uri,
    readonly output: vscode.LogOutputChannel,
    private readonly diagnostics: vscode.DiagnosticCollection,
    private readonly statusItem: vscode.StatusBarItem,
  ) {}

  /** Open (or reveal) the panel of `uri` beside the active editor. */
  open(uri: vscode.Uri): AnalysisPanel {
    const existing = this.byUri.get(uri.toString());
    if (existing) {
      existing.reveal();
      this.didFocus(existing);
      return existing;
    }
    const panel = AnalysisPanel.create(this, uri);
    this.byUri.set(uri.toString(), panel);
    this.didFocus(panel);
    return panel;
  }

  /** Attach a custom editor's webview panel to the log `uri`. */
  attachEditor(uri: vscode.Uri, webviewPanel: vscode.WebviewPanel): AnalysisPanel {
    const panel = new AnalysisPanel(this, webviewPanel, uri, {});
    this.editors.add(panel);
    this.didFocus(panel);
    return panel;
  }

  /** Restore a panel after a reload (serializer); a state without a log URI closes the panel. */
  async deserializeWebviewPanel(webviewPanel: vscode.WebviewPanel, state: unknown): Promise<void> {
    const persisted = parsePersistedState(state);
    if (!persisted) {
      this.output.warn('a Residuum panel could not be restored: it kept no log URI');
      webviewPanel.dispose();
      return;
    }
    const uri = vscode.Uri.parse(persisted.uri, true);
    if (this.byUri.has(uri.toString())) {
      webviewPanel.dispose();
      return;
    }
    this.revive(webviewPanel, uri, persisted.view);
  }

  /** The panel shown for `uri` (the command's first, else a custom editor's). */
  find(uri: vscode.Uri): AnalysisPanel | undefined {
    const key = uri.toString();
    return this.byUri.get(key) ?? [...this.editors].find((p) => p.uri.toString() === key);
  }

  /** Worst entries and findings count of the panel of `uri`, once analysed. */
  panelState(uri: vscode.Uri): { worst: WorstEntry[]; findings: number } | undefined {
    return this.find(uri)?.state();
  }

  /** The panel the worst-epoch commands act on: that of the active text editor's log, else the last focused one. */
  current(): AnalysisPanel | undefined {
    const editorUri = vscode.window.activeTextEditor?.document.uri;
    return (editorUri && this.find(editorUri)) || this.active;
  }

  /** Re-run every panel whose log the changed settings concern. */
  reconfigure(e: vscode.ConfigurationChangeEvent): void {
    for (const p of this.all()) if (e.affectsConfiguration('residuum', p.uri)) p.reconfigure();
  }

  /** Close every panel. */
  dispose(): void {
    for (const p of this.all()) p.dispose();
  }

  didUpdate(panel: AnalysisPanel): void {
    this.setProblems(panel);
    if (panel === this.active) this.updateStatus();
  }

  didFocus(panel: AnalysisPanel): void {
    this.active = panel;
    this.updateStatus();
  }

  didDispose(panel: AnalysisPanel): void {
    if (this.byUri.get(panel.uri.toString()) === panel) this.byUri.delete(panel.uri.toString());
    this.editors.delete(panel);
    if (this.active === panel) this.active = this.all().at(-1);
    const other = this.find(panel.uri);
    if (other) this.setProblems(other);
    else this.clearProblems(panel);
    this.updateStatus();
  }

  private revive(webviewPanel: vscode.WebviewPanel, uri: vscode.Uri, view: ViewState): void {
    const panel = new AnalysisPanel(this, webviewPanel, uri, view);
    this.byUri.set(uri.toString(), panel);
    this.didFocus(panel);
  }

  private all(): AnalysisPanel[] {
    return [...this.byUri.values(), ...this.editors];
  }

  private problemUris = new Map<string, vscode.Uri[]>();

  private setProblems(panel: AnalysisPanel): void {
    const report = panel.report;
    if (!report) return;
    this.clearProblems(panel);
    const problems = toProblems(report.findings, panel.readerDiagnostics, panel.configuration.maxProblems, (f) => panel.resolveFile(f));
    for (const { uri, diagnostics } of problems.files.values()) this.diagnostics.set(uri, diagnostics);
    for (const [k, v] of problems.unknownColumns) this.unknownColumns.set(k, v);
    this.problemUris.set(panel.uri.toString(), [...problems.files.values()].map((f) => f.uri));
  }

  private clearProblems(panel: AnalysisPanel): void {
    for (const u of this.problemUris.get(panel.uri.toString()) ?? []) this.diagnostics.delete(u);
    this.problemUris.delete(panel.uri.toString());
  }

  private updateStatus(): void {
    const panel = this.active;
    const report = panel?.report;
    void vscode.commands.executeCommand('setContext', 'residuum.hasWorst', (report?.worst.length ?? 0) > 0);
    if (!panel || !report) {
      this.statusItem.hide();
      return;
    }
    const share = headlineInside95(report.channels);
    const text = share === undefined ? 'no NIS' : `NIS ${(share * 100).toFixed(1)}% in bounds`;
    this.statusItem.text = `$(pulse) ${text}`;
    this.statusItem.tooltip = `Residuum: ${AnalysisPanel.title(panel.uri).slice('Residuum: '.length)}: share of NIS values inside their 95% chi-square bounds, all channels (${report.findings.length} findings). Click to show the analysis.`;
    this.statusItem.accessibilityInformation = { label: `Residuum: ${text}, ${report.findings.length} findings. Show the analysis.`, role: 'button' };
    this.statusItem.command = { title: 'Show Residuum analysis', command: 'residuum.openAnalysis', arguments: [panel.uri] };
    this.statusItem.show();
  }
}

/**
 * The set of open analysis panels: one per log opened by command (revealed when opened again), plus those of the
 * read-only custom editor. Keeps the Problems panel and the status-bar item in step with them, and knows which
 * panel is active for the next/previous worst epoch commands.
 */
import * as vscode from 'vscode';
import type { WorstEntry } from '../core/report';
import { parsePersistedState, type ViewState } from '../protocol';
import { AnalysisPanel, PANEL_VIEW_TYPE, type PanelHost } from './panel';
import { toProblems } from './problems';
import { headlineInside95 } from './ranking';
import { orphansToRevive, parseKeptPanels, type KeptPanel } from './revive';

/** Workspace-state key of the open panels' logs and view states (see revive.ts). */
const KEPT_PANELS_KEY = 'residuum.openPanels';
/** How long after activation the serializer has to revive visible panels before a tab counts as orphaned, ms. */
const REVIVE_GRACE_MS = 2500;

/** Manages every analysis panel of the extension. */
export class PanelManager implements PanelHost, vscode.WebviewPanelSerializer {
  private readonly byUri = new Map<string, AnalysisPanel>();
  private readonly editors = new Set<AnalysisPanel>();
  private active: AnalysisPanel | undefined;
  /** Column names of `unknown-column` diagnostics, by {@link unknownColumnKey} (read by the quick fix). */
  readonly unknownColumns = new Map<string, string>();

  private shuttingDown = false;
  private keepTimer: ReturnType<typeof setTimeout> | undefined;
  private reviveTimer: ReturnType<typeof setTimeout> | undefined;
  private readonly watchTabs: vscode.Disposable | undefined;

  constructor(
    readonly extensionUri: vscode.Uri,
    readonly output: vscode.LogOutputChannel,
    private readonly diagnostics: vscode.DiagnosticCollection,
    private readonly statusItem: vscode.StatusBarItem,
    private readonly workspaceState?: vscode.Memento,
  ) {
    if (workspaceState) {
      // After the serializer had its chance, open again the panels whose tabs no panel owns (revive.ts); and again
      // whenever such a tab is shown later.
      this.scheduleRevive(REVIVE_GRACE_MS);
      this.watchTabs = vscode.window.tabGroups.onDidChangeTabs(() => this.scheduleRevive(REVIVE_GRACE_MS));
    }
  }

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
    this.scheduleKeep();
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

  /** Close every panel (the extension stops: the kept panels stay kept for the next activation). */
  dispose(): void {
    this.shuttingDown = true;
    if (this.keepTimer) clearTimeout(this.keepTimer);
    if (this.reviveTimer) clearTimeout(this.reviveTimer);
    this.watchTabs?.dispose();
    for (const p of this.all()) p.dispose();
  }

  didChangeView(panel: AnalysisPanel): void {
    if (this.byUri.get(panel.uri.toString()) === panel) this.scheduleKeep();
  }

  didUpdate(panel: AnalysisPanel): void {
    this.setProblems(panel);
    if (panel === this.active) this.updateStatus();
  }

  didFocus(panel: AnalysisPanel): void {
    this.active = panel;
    this.updateStatus();
  }

  didDispose(panel: AnalysisPanel, byUser: boolean): void {
    if (this.byUri.get(panel.uri.toString()) === panel) {
      this.byUri.delete(panel.uri.toString());
      if (byUser && !this.shuttingDown) this.scheduleKeep();
    }
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
    this.scheduleKeep();
  }

  /** Write the open panels' logs and view states to the workspace state (debounced). */
  private scheduleKeep(): void {
    if (!this.workspaceState || this.shuttingDown) return;
    if (this.keepTimer) clearTimeout(this.keepTimer);
    this.keepTimer = setTimeout(() => {
      this.keepTimer = undefined;
      const kept: Record<string, KeptPanel> = {};
      for (const [uri, p] of this.byUri) kept[uri] = { title: AnalysisPanel.title(p.uri), view: p.viewState };
      this.output.debug(`kept panels: ${JSON.stringify(kept)}`);
      void this.workspaceState?.update(KEPT_PANELS_KEY, kept);
    }, 200);
  }

  private scheduleRevive(delay_ms: number): void {
    if (this.shuttingDown) return;
    if (this.reviveTimer) clearTimeout(this.reviveTimer);
    this.reviveTimer = setTimeout(() => {
      this.reviveTimer = undefined;
      void this.reviveOrphans();
    }, delay_ms);
  }

  /** Open again, in the same column and state, the visible Residuum tabs that no panel owns (see revive.ts). */
  private async reviveOrphans(): Promise<void> {
    if (!this.workspaceState || this.shuttingDown) return;
    const kept = parseKeptPanels(this.workspaceState.get(KEPT_PANELS_KEY));
    if (kept.size === 0) return;
    const tabs: { label: string; active: boolean; tab: vscode.Tab; column: vscode.ViewColumn }[] = [];
    for (const group of vscode.window.tabGroups.all) {
      for (const tab of group.tabs) {
        if (tab.input instanceof vscode.TabInputWebview && tab.input.viewType.endsWith(PANEL_VIEW_TYPE)) {
          tabs.push({ label: tab.label, active: tab.isActive, tab, column: group.viewColumn });
        }
      }
    }
    for (const { tab, uri, view } of orphansToRevive(tabs, kept, (u) => this.byUri.has(u))) {
      this.output.info(`opening the panel of ${uri} again in view state ${JSON.stringify(view)} (its tab was left without a panel, e.g. after an extension host restart)`);
      await vscode.window.tabGroups.close(tab.tab, true).then(undefined, () => undefined);
      if (this.shuttingDown || this.byUri.has(uri)) continue;
      const log = vscode.Uri.parse(uri, true);
      const panel = AnalysisPanel.create(this, log, tab.column, view);
      this.byUri.set(uri, panel);
      this.didFocus(panel);
    }
    this.scheduleKeep();
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

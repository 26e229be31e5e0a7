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
import { keptOrphans, orphansToRevive, panelTitles, parseKeptPanels, type KeptPanel } from './revive';

/** Workspace-state key of the open panels' logs and view states (see revive.ts). */
const KEPT_PANELS_KEY = 'residuum.openPanels';
/**
 * Appended to the title of a panel opened in place of an orphaned tab until that tab is closed (a zero-width space:
 * invisible, but the two tabs' labels differ, so the old one is found by its label alone).
 */
const REPLACING_MARK = '\u200b';

/** Whether a tab is a Residuum analysis panel's (a webview tab of PANEL_VIEW_TYPE). */
function isPanelTab(tab: vscode.Tab): boolean {
  return tab.input instanceof vscode.TabInputWebview && tab.input.viewType.endsWith(PANEL_VIEW_TYPE);
}

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
  /** Tab labels already reported as fitting several kept logs (reported once). */
  private readonly warnedAmbiguous = new Set<string>();
  /** Panels opened in place of an orphaned tab whose old tab is not closed yet (their titles carry REPLACING_MARK). */
  private readonly replacing = new Set<AnalysisPanel>();
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
    this.retitle();
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
      if (!this.shuttingDown) this.retitle();
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
    this.retitle();
    this.didFocus(panel);
    this.scheduleKeep();
  }

  /**
   * Give every panel opened by command its title from revive.ts panelTitles: the log's file name, and its folders too
   * while another open log has the same name, so no two tabs read alike (a tab is matched to its log by its title
   * after an extension host restart).
   */
  private retitle(): void {
    const titles = panelTitles([...this.byUri].map(([key, p]) => ({ key, path: p.uri.path })));
    for (const [key, p] of this.byUri) {
      const title = titles.get(key);
      const want = title !== undefined && this.replacing.has(p) ? title + REPLACING_MARK : title;
      if (want !== undefined && p.panel.title !== want) p.panel.title = want;
    }
  }

  /** Write the open panels' logs and view states to the workspace state (debounced). */
  private scheduleKeep(): void {
    if (!this.workspaceState || this.shuttingDown) return;
    if (this.keepTimer) clearTimeout(this.keepTimer);
    this.keepTimer = setTimeout(() => {
      this.keepTimer = undefined;
      const kept: Record<string, KeptPanel> = {};
      // Hidden tabs a restart left without a panel keep their entries until they are shown (and opened again).
      const previous = parseKeptPanels(this.workspaceState?.get(KEPT_PANELS_KEY));
      for (const [uri, entry] of keptOrphans(previous, (u) => this.byUri.has(u), this.orphanTabLabels())) kept[uri] = entry;
      for (const [uri, p] of this.byUri) kept[uri] = { title: p.panel.title.replace(REPLACING_MARK, ''), view: p.viewState };
      this.output.debug(`kept panels: ${JSON.stringify(kept)}`);
      void this.workspaceState?.update(KEPT_PANELS_KEY, kept);
    }, 200);
  }

  /**
   * Look for orphaned tabs in `delay_ms`, unless a look is already due: it then sees the tabs as they are by then. Not
   * postponed by further tab events (a stream of them, e.g. while panels load on a busy machine, would otherwise
   * delay the look indefinitely and a shown tab would stay empty).
   */
  private scheduleRevive(delay_ms: number): void {
    if (this.shuttingDown || this.reviveTimer) return;
    this.reviveTimer = setTimeout(() => {
      this.reviveTimer = undefined;
      void this.reviveOrphans();
    }, delay_ms);
  }

  /** The Residuum panel tabs of the window, with their groups' columns. */
  private panelTabs(): { label: string; active: boolean; tab: vscode.Tab; column: vscode.ViewColumn }[] {
    const tabs: { label: string; active: boolean; tab: vscode.Tab; column: vscode.ViewColumn }[] = [];
    for (const group of vscode.window.tabGroups.all) {
      for (const tab of group.tabs) {
        if (isPanelTab(tab)) {
          tabs.push({ label: tab.label, active: tab.isActive, tab, column: group.viewColumn });
        }
      }
    }
    return tabs;
  }

  /** Labels of the Residuum panel tabs that are no open panel's title (tabs left without a panel by a restart). */
  private orphanTabLabels(): Set<string> {
    const owned = new Set([...this.all()].map((p) => p.panel.title));
    return new Set(this.panelTabs().map((t) => t.label).filter((l) => !owned.has(l)));
  }

  /** Open again, in the same column and state, the visible Residuum tabs that no panel owns (see revive.ts). */
  private async reviveOrphans(): Promise<void> {
    if (!this.workspaceState || this.shuttingDown) return;
    const kept = parseKeptPanels(this.workspaceState.get(KEPT_PANELS_KEY));
    if (kept.size === 0) return;
    const { revive, ambiguous } = orphansToRevive(this.panelTabs(), kept, (u) => this.byUri.has(u));
    for (const { tab } of ambiguous) {
      if (this.warnedAmbiguous.has(tab.label)) continue;
      this.warnedAmbiguous.add(tab.label);
      this.output.warn(`the tab "${tab.label}" fits several logs kept for reopening; it is left as it is (close it and open the log again)`);
    }
    for (const { tab, uri, view } of revive) {
      this.output.info(`opening the panel of ${uri} again in view state ${JSON.stringify(view)} (its tab was left without a panel, e.g. after an extension host restart)`);
      if (this.shuttingDown || this.byUri.has(uri)) continue;
      // The new panel first, then the old tab closed: closing first could empty its group, which VS Code then
      // removes, so the columns of the groups right of it (and of the other orphans) would shift by one.
      // Until the old tab is closed the new one's title carries an invisible mark, so the two are never confused
      // (a new tab is not always its group's active one by the time the tab model shows it).
      const log = vscode.Uri.parse(uri, true);
      const panel = AnalysisPanel.create(this, log, tab.column, view);
      this.byUri.set(uri, panel);
      this.replacing.add(panel);
      this.retitle();
      this.didFocus(panel);
      await this.closeOrphanTab(tab.label, tab.column);
      this.replacing.delete(panel);
      this.retitle();
    }
    this.scheduleKeep();
  }

  /**
   * Close the orphaned tab `label` of column `column` once the panel opened in its place (titled `label` with
   * REPLACING_MARK) is in that group, so closing never empties the group (VS Code would remove it and shift the
   * columns right of it). The tabs are looked up afresh on every try (the tab model follows a new panel
   * asynchronously, and Tab objects read before it changed no longer close anything).
   */
  private async closeOrphanTab(label: string, column: vscode.ViewColumn): Promise<void> {
    for (let attempt = 0; attempt < 200 && !this.shuttingDown; attempt++) {
      const group = vscode.window.tabGroups.all.find((g) => g.viewColumn === column);
      const old = group?.tabs.filter((t) => isPanelTab(t) && t.label === label) ?? [];
      const replacement = group?.tabs.some((t) => isPanelTab(t) && t.label === label + REPLACING_MARK) ?? false;
      if (old.length === 1 && replacement) {
        await vscode.window.tabGroups.close(old[0], true).then(undefined, (e: unknown) => this.output.warn(`could not close the old tab "${label}": ${String(e)}`));
        return;
      }
      await new Promise((resolve) => setTimeout(resolve, 50));
    }
    this.output.warn(`the old tab "${label}" was not found beside the panel opened in its place; it is left open`);
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
    // A panel opened by command has the title that tells same-named logs apart; a custom editor's is the file name.
    const title = this.byUri.get(panel.uri.toString()) === panel ? panel.panel.title : AnalysisPanel.title(panel.uri);
    this.statusItem.tooltip = `${title}: share of NIS values inside their 95% chi-square bounds, all channels (${report.findings.length} findings). Click to show the analysis.`;
    this.statusItem.accessibilityInformation = { label: `Residuum: ${text}, ${report.findings.length} findings. Show the analysis.`, role: 'button' };
    this.statusItem.command = { title: 'Show Residuum analysis', command: 'residuum.openAnalysis', arguments: [panel.uri] };
    this.statusItem.show();
  }
}

/**
 * One analysis panel for one log: its webview, the analysis run in a worker, the series kept for window queries,
 * the watcher that re-reads a growing log, and the jumps to log lines. The manager (panels.ts) creates, finds and
 * revives panels; this class owns everything about one.
 *
 * Jumps always use `vscode.open` with a `selection`: logs over 50 MB cannot become TextDocuments in the extension
 * host, so `openTextDocument` is never used for them.
 */
import * as path from 'node:path';
import * as vscode from 'vscode';
import type { Diagnostic as ReaderDiagnostic } from '../core/model';
import type { Report, WorstEntry } from '../core/report';
import type { Series } from '../core/series';
import type { Comparison } from '../core/compareRuns';
import {
  assertNever,
  parseWebviewMessage,
  type CompareAlign,
  type CompareUpdateMessage,
  type MonteCarloUpdateMessage,
  type HostToWebviewMessage,
  type HistogramInfo,
  type InitMessage,
  type ReadInfo,
  type RevealLineMessage,
  type SeriesRequestMessage,
  type SeriesResponseMessage,
  type ViewState,
} from '../protocol';
import { readConfiguration, type EditorConfiguration } from './configuration';
import { nisHistogram } from './histogram';
import { notesPanelHooks } from './notesPanelHook';
import { panelHtml, webviewOptions } from './html';
import { describeRead, restartNotice } from './liveText';
import { stepIndex } from './ranking';
import type { WorkerRequest } from './analysisWorker';
import { AnalysisError, AnalysisSession, runComparison, runMonteCarlo, type AnalysisResult } from './runAnalysis';
import { compareReadyMessage, compareStateMessage, monteCarloReadyMessage, monteCarloStateMessage } from './runsMessages';
import { expandRunUris, pickCompareRuns, pickMonteCarloRuns } from './runsPick';
import { SeriesStore, pushOrder } from './seriesStore';

/** The panel's webview type (also the serializer's). */
export const PANEL_VIEW_TYPE = 'residuum.analysis';

/** Series per `series/responseBatch` when the first envelopes are pushed after `init`. */
const PUSH_BATCH = 6;

/** Debounce of file-change events before a re-read, milliseconds. */
const RELOAD_DEBOUNCE_MS = 250;

/** What a panel needs from its manager (direct calls, no events). */
export interface PanelHost {
  readonly extensionUri: vscode.Uri;
  readonly output: vscode.LogOutputChannel;
  /** A run finished (or was re-read): refresh Problems and the status bar. */
  didUpdate(panel: AnalysisPanel): void;
  /** The panel became the active one. */
  didFocus(panel: AnalysisPanel): void;
  /** The panel closed (`byUser`: closed in the editor, not disposed with the extension). */
  didDispose(panel: AnalysisPanel, byUser: boolean): void;
  /** The panel's view state changed (tab, window, cursor, worst entry). */
  didChangeView(panel: AnalysisPanel): void;
}

/** Escape glob metacharacters of a file name for a RelativePattern. */
export function globEscape(name: string): string {
  return name.replace(/[[\]{}*?!]/g, (c) => `[${c}]`);
}

/** One log's analysis panel. */
export class AnalysisPanel {
  private readonly disposables: vscode.Disposable[] = [];
  private store: SeriesStore | undefined;
  private result: AnalysisResult | undefined;
  private histograms: HistogramInfo[] = [];
  private revision = 0;
  /** performance.now() when the latest `init` was posted (for the answers' timing fields). */
  private initPostedAt = 0;
  /** The chart width the webview said in its latest `ready` (envelopes are pushed after `init` at this width). */
  private readyWidthPx: number | undefined;
  private ready = false;
  private loading: AbortController | undefined;
  private reloadPending = false;
  private error: string | undefined;
  private session: AnalysisSession | undefined;
  private reloadTimer: ReturnType<typeof setTimeout> | undefined;
  private disposed = false;
  private config: EditorConfiguration;
  /** Other runs compared with this log (local paths, in the order added). */
  private compareFiles: string[] = [];
  private compareAlign: CompareAlign = { by: 'time' };
  private compareView: CompareUpdateMessage | undefined;
  private comparing: AbortController | undefined;
  /** The latest comparison (for its export). */
  private comparisonResult: Comparison | undefined;
  private monteCarloView: MonteCarloUpdateMessage | undefined;
  private monteCarloRunning: AbortController | undefined;
  /** A view of several runs to show once the webview listens. */
  private pendingFocus: 'compare' | 'montecarlo' | undefined;
  private settleLoaded: () => void = () => undefined;
  /** Settles when the first analysis finished, failed or was cancelled. */
  readonly loaded: Promise<void> = new Promise((resolve) => (this.settleLoaded = resolve));

  /**
   * Open a new panel for `uri` beside the active editor (or in `column`), without taking focus, showing `view`
   * (used to open a panel again in its state after the extension host restarted).
   */
  static create(host: PanelHost, uri: vscode.Uri, column: vscode.ViewColumn = vscode.ViewColumn.Beside, view: ViewState = {}): AnalysisPanel {
    const panel = vscode.window.createWebviewPanel(
      PANEL_VIEW_TYPE,
      AnalysisPanel.title(uri),
      { viewColumn: column, preserveFocus: true },
      webviewOptions(host.extensionUri),
    );
    return new AnalysisPanel(host, panel, uri, view);
  }

  /** Panel title for a log. */
  static title(uri: vscode.Uri): string {
    return `Residuum: ${path.posix.basename(uri.path)}`;
  }

  /** Adopt an existing webview panel (restored by the serializer, or a custom editor's) for `uri`. */
  constructor(
    private readonly host: PanelHost,
    readonly panel: vscode.WebviewPanel,
    readonly uri: vscode.Uri,
    private view: ViewState,
  ) {
    this.config = this.readConfig();
    panel.iconPath = vscode.Uri.joinPath(host.extensionUri, 'media', 'residuum.svg');
    panel.webview.options = webviewOptions(host.extensionUri);
    panel.webview.html = panelHtml(panel.webview, host.extensionUri);
    this.disposables.push(
      panel.onDidDispose(() => this.dispose(true)),
      panel.webview.onDidReceiveMessage((m: unknown) => this.onMessage(m)),
      panel.onDidChangeViewState((e) => {
        if (e.webviewPanel.active) host.didFocus(this);
      }),
    );
    this.watch();
    void this.load('open');
  }

  /** The latest report, once an analysis finished. */
  get report(): Report | undefined {
    return this.result?.report;
  }

  /** The latest series (for the report export), once an analysis finished. */
  get series(): readonly Series[] | undefined {
    return this.result?.series;
  }

  /** Reader diagnostics of the latest run. */
  get readerDiagnostics(): readonly ReaderDiagnostic[] {
    return this.result?.diagnostics ?? [];
  }

  /** What the panel shows and where (the webview's last view state). */
  get viewState(): ViewState {
    return { ...this.view };
  }

  /** The settings this panel's log was analysed with. */
  get configuration(): EditorConfiguration {
    return this.config;
  }

  /** Worst entries, findings count and how the log was last read, for in-host tests (undefined until analysed). */
  state(): { worst: WorstEntry[]; findings: number; epochs: number; read?: ReadInfo } | undefined {
    const r = this.result?.report;
    if (!r) return undefined;
    const out: { worst: WorstEntry[]; findings: number; epochs: number; read?: ReadInfo } = { worst: r.worst, findings: r.findings.length, epochs: r.time.epochs };
    if (this.result?.read) out.read = this.result.read;
    return out;
  }

  /** Show the panel (in its column) without taking focus. */
  reveal(): void {
    this.panel.reveal(undefined, true);
  }

  /** Read the settings again and re-run the analysis (settings changed). */
  reconfigure(): void {
    this.config = this.readConfig();
    void this.load('settings');
  }

  /** Move to the next (1) or previous (-1) worst epoch: cursor in every chart, the log line revealed. */
  async stepWorst(direction: 1 | -1): Promise<void> {
    const worst = this.result?.report.worst ?? [];
    const index = stepIndex(this.view.worstIndex, worst.length, direction);
    if (index === undefined) {
      void vscode.window.showInformationMessage('Residuum: this log has no worst epochs to go to.');
      return;
    }
    const entry = worst[index];
    this.view = { ...this.view, worstIndex: index, cursor_s: entry.t };
    this.post({ type: 'cursor/set', t: entry.t, worstIndex: index });
    await this.revealLine({ type: 'reveal/line', line: entry.line, t: entry.t, worstIndex: index });
  }

  /** The URI of file `name` of the run (undefined or the main log's own name: the log). */
  resolveFile(name: string | undefined): vscode.Uri {
    if (name === undefined || name === '' || this.uri.scheme !== 'file') return this.uri;
    const logPath = this.uri.fsPath;
    const abs = path.resolve(path.dirname(logPath), name);
    return abs === logPath ? this.uri : vscode.Uri.file(abs);
  }

  /** The latest comparison shown in the compare view, if any. */
  get comparison(): Comparison | undefined {
    return this.comparisonResult;
  }

  /** The compare view's and the Monte Carlo view's states, for in-host tests. */
  runsState(): { compare?: CompareUpdateMessage['state']; compareRuns: number; monteCarlo?: MonteCarloUpdateMessage['state']; monteCarloRuns: number } {
    return {
      compare: this.compareView?.state,
      compareRuns: this.compareView?.runs.length ?? 0,
      monteCarlo: this.monteCarloView?.state,
      monteCarloRuns: this.monteCarloView?.runs ?? 0,
    };
  }

  /**
   * Add runs to this log's comparison (the panel's own log and runs already there are skipped) and compare again
   * in the worker; the compare view is shown. Resolves when the comparison is shown or failed.
   */
  async compareWith(uris: readonly vscode.Uri[], align?: CompareAlign): Promise<void> {
    for (const u of uris) {
      if (u.scheme !== 'file') {
        this.host.output.warn(`compare: ${u.toString()} is not on the local disk; left out`);
        continue;
      }
      if (u.fsPath !== this.uri.fsPath && !this.compareFiles.includes(u.fsPath)) this.compareFiles.push(u.fsPath);
    }
    if (align) this.compareAlign = align;
    await this.runCompare(true);
  }

  /** Check N runs of one scenario together (Monte Carlo) and show the result in this panel's Monte Carlo view. */
  async monteCarlo(uris: readonly vscode.Uri[]): Promise<void> {
    const local = uris.filter((u) => u.scheme === 'file').map((u) => u.fsPath);
    const paths = local.includes(this.uri.fsPath) ? local : [this.uri.fsPath, ...local];
    this.monteCarloRunning?.abort();
    if (paths.length < 2) {
      this.setMonteCarlo(monteCarloStateMessage('error', paths, 'A Monte Carlo check needs two or more runs of the same scenario (a folder of logs, or several logs).', true));
      return;
    }
    const controller = new AbortController();
    this.monteCarloRunning = controller;
    this.setMonteCarlo(monteCarloStateMessage('loading', paths, `Reading ${paths.length} runs…`, true));
    try {
      const result = await this.workerJob(controller, `Monte Carlo over ${paths.length} runs`, 'Monte Carlo check',
        (workerFile, signal) => runMonteCarlo(workerFile, { kind: 'montecarlo', paths, map: this.mapPath(), settings: this.config.analysis }, () => undefined, signal),
        (message) => this.setMonteCarlo(monteCarloStateMessage('error', paths, message, true)));
      if (!result) return;
      this.setMonteCarlo(monteCarloReadyMessage(result.block, paths, true));
      this.host.output.info(`Monte Carlo over ${paths.length} runs: ${Object.keys(result.block.nees).length} NEES blocks, ${Object.keys(result.block.nis).length} NIS channels`);
    } finally {
      if (this.monteCarloRunning === controller) this.monteCarloRunning = undefined;
    }
  }

  /**
   * One comparison or Monte Carlo job in the worker thread, with the window's progress spinner. Resolves with the
   * result, or undefined when it was cancelled or the panel closed meanwhile; a failure is logged as `what` failed
   * and handed to `onError`, which shows it in the view.
   */
  private async workerJob<T>(controller: AbortController, title: string, what: string,
    job: (workerFile: string, signal: AbortSignal) => Promise<T>, onError: (message: string) => void): Promise<T | undefined> {
    try {
      const result = await vscode.window.withProgress({ location: vscode.ProgressLocation.Window, title: `$(sync~spin) Residuum: ${title}` }, () =>
        job(this.workerFile(), controller.signal));
      return this.disposed || controller.signal.aborted ? undefined : result;
    } catch (e) {
      if (this.disposed || (e instanceof DOMException && e.name === 'AbortError')) return undefined;
      const message = e instanceof Error ? e.message : String(e);
      this.host.output.error(`${what} failed: ${message}`);
      onError(message);
      return undefined;
    }
  }

  /** The bundled worker thread entry. */
  private workerFile(): string {
    return vscode.Uri.joinPath(this.host.extensionUri, 'dist', 'analysisWorker.js').fsPath;
  }

  private setMonteCarlo(m: MonteCarloUpdateMessage): void {
    this.monteCarloView = { ...m, focus: false };
    // The view to show is also the panel's: an `init` sent later (the panel's own analysis finishing after the runs'
    // result) then keeps it instead of going back to the view it had.
    if (m.focus) this.view = { ...this.view, view: 'montecarlo' };
    if (!this.post(m) && m.focus) this.pendingFocus = 'montecarlo';
  }

  private setCompare(m: CompareUpdateMessage): void {
    this.compareView = { ...m, focus: false };
    if (m.focus) this.view = { ...this.view, view: 'compare' };
    if (!this.post(m) && m.focus) this.pendingFocus = 'compare';
  }

  private async runCompare(focus: boolean): Promise<void> {
    this.comparing?.abort();
    const paths = [this.uri.fsPath, ...this.compareFiles];
    if (this.compareFiles.length === 0) {
      this.comparisonResult = undefined;
      this.setCompare(compareStateMessage('empty', paths, this.compareAlign, undefined, focus));
      return;
    }
    const controller = new AbortController();
    this.comparing = controller;
    this.setCompare(compareStateMessage('loading', paths, this.compareAlign, `Comparing ${paths.length} runs…`, focus));
    try {
      const result = await this.workerJob(controller, `comparing ${paths.length} runs`, 'comparison',
        (workerFile, signal) => runComparison(workerFile, { kind: 'compare', paths, align: this.compareAlign, map: this.mapPath(), settings: this.config.analysis }, () => undefined, signal),
        (message) => {
          this.comparisonResult = undefined;
          this.setCompare(compareStateMessage('error', paths, this.compareAlign, message, focus));
        });
      if (!result) return;
      this.comparisonResult = result.comparison;
      this.setCompare(compareReadyMessage(result.comparison, result.eventKinds, focus));
      this.host.output.info(`compared ${paths.length} runs on ${result.comparison.span.start}..${result.comparison.span.end} s (${result.comparison.figures.length} figures)`);
    } finally {
      if (this.comparing === controller) this.comparing = undefined;
    }
  }

  /** Close the panel and release everything (`byUser`: it was closed in the editor). */
  dispose(byUser = false): void {
    if (this.disposed) return;
    this.disposed = true;
    this.loading?.abort();
    this.session?.dispose();
    this.comparing?.abort();
    this.monteCarloRunning?.abort();
    if (this.reloadTimer) clearTimeout(this.reloadTimer);
    this.host.didDispose(this, byUser);
    notesPanelHooks.onDisposed?.(this);
    this.panel.dispose();
    for (const d of this.disposables.splice(0)) d.dispose();
  }

  private readConfig(): EditorConfiguration {
    const cfg = vscode.workspace.getConfiguration('residuum', this.uri);
    return readConfiguration((key) => cfg.get(key));
  }

  /** Post to the webview; false when it is not listening yet (or gone). */
  private post(message: HostToWebviewMessage): boolean {
    if (!this.ready || this.disposed) return false;
    void this.panel.webview.postMessage(message);
    return true;
  }

  private mapPath(): string | undefined {
    const m = this.config.mapPath;
    if (m === undefined) return undefined;
    if (path.isAbsolute(m)) return m;
    const folder = vscode.workspace.getWorkspaceFolder(this.uri);
    const base = folder && folder.uri.scheme === 'file' ? folder.uri.fsPath : path.dirname(this.uri.fsPath);
    return path.resolve(base, m);
  }

  private async load(reason: 'open' | 'change' | 'settings'): Promise<void> {
    if (this.loading) {
      this.reloadPending = true;
      return;
    }
    if (this.uri.scheme !== 'file') {
      this.fail(`Residuum reads logs from the local disk; ${this.uri.scheme}: files are not supported yet.`);
      this.settleLoaded();
      return;
    }
    const controller = new AbortController();
    this.loading = controller;
    this.post({ type: 'status', state: 'loading', uri: this.uri.toString() });
    const name = path.basename(this.uri.fsPath);
    const workerFile = this.workerFile();
    const request: WorkerRequest = { path: this.uri.fsPath, map: this.mapPath(), settings: this.config.analysis };
    // One session per request: new settings or another mapping path start a new one (which reads from the start).
    if (this.session && JSON.stringify(this.session.request) !== JSON.stringify(request)) {
      this.session.dispose();
      this.session = undefined;
    }
    const session = (this.session ??= new AnalysisSession(workerFile, request));
    const started = Date.now();
    try {
      const result = await vscode.window.withProgress(
        reason === 'open'
          ? { location: vscode.ProgressLocation.Notification, title: `Residuum: analysing ${name}`, cancellable: true }
          : { location: vscode.ProgressLocation.Window, title: `$(sync~spin) Residuum: re-reading ${name}` },
        (progress, token) => {
          token.onCancellationRequested(() => controller.abort());
          let reported = 0;
          return session.run((fraction) => {
            const percent = Math.round(fraction * 100);
            if (percent > reported) {
              progress.report({ increment: percent - reported, message: `${percent}% read` });
              reported = percent;
              this.post({ type: 'status', state: 'loading', progress: fraction, uri: this.uri.toString() });
            }
          }, controller.signal);
        },
      );
      if (this.disposed) return;
      this.accept(result);
      this.host.output.info(`analysed ${this.uri.fsPath} in ${Date.now() - started} ms (${result.report.time.epochs} epochs, ${result.series.length} series; ${describeRead(result.read)})`);
    } catch (e) {
      if (this.disposed) return;
      if (e instanceof DOMException && e.name === 'AbortError') {
        this.host.output.info(`analysis of ${this.uri.fsPath} cancelled`);
        if (!this.result) this.fail('The analysis was cancelled. Choose "Try again" to read the log again.');
      } else {
        const message = e instanceof AnalysisError || e instanceof Error ? e.message : String(e);
        this.host.output.error(`analysis of ${this.uri.fsPath} failed: ${message}`);
        if (!this.result) this.fail(message);
        else this.sendInit(`The log could not be read again (${message}); the panel shows the previous reading.`);
        void vscode.window.showErrorMessage(`Residuum: ${message}`);
      }
    } finally {
      this.settleLoaded();
      if (this.loading === controller) this.loading = undefined;
      if (this.reloadPending && !this.disposed) {
        this.reloadPending = false;
        void this.load('change');
      }
    }
  }

  private accept(result: AnalysisResult): void {
    this.result = result;
    this.error = undefined;
    this.store = new SeriesStore(result.series, this.config.maxPathPoints);
    this.histograms = [];
    for (const info of this.store.infos()) {
      if (!info.key.startsWith('nis/')) continue;
      const channel = result.report.channels.find((c) => `nis/${c.name}` === info.key);
      const series = this.store.get(info.key);
      if (channel && series && channel.dof >= 1) this.histograms.push(nisHistogram(info.key, series.y, channel.dof, 30, 0.995, info.points));
    }
    this.revision++;
    if (this.view.worstIndex !== undefined && this.view.worstIndex >= result.report.worst.length) this.view = { ...this.view, worstIndex: undefined };
    const notice = restartNotice(result.read);
    if (notice) this.host.output.info(`${this.uri.fsPath}: ${notice}`);
    this.sendInit(notice);
    this.host.didUpdate(this);
    notesPanelHooks.onAnalysed?.(this);
  }

  /** The views of several runs again (after the webview reloaded; it keeps nothing while hidden). */
  private resendRuns(): void {
    const focus = this.pendingFocus;
    this.pendingFocus = undefined;
    if (this.compareView) this.post({ ...this.compareView, focus: focus === 'compare' });
    if (this.monteCarloView) this.post({ ...this.monteCarloView, focus: focus === 'montecarlo' });
  }

  private sendInit(notice: string | undefined): void {
    if (!this.result || !this.store) return;
    const r = this.result;
    const message: InitMessage = {
      type: 'init',
      revision: this.revision,
      uri: this.uri.toString(),
      logName: path.posix.basename(this.uri.path),
      files: (r.files.length ? r.files : [this.uri.fsPath]).map((f) => path.basename(f)),
      report: r.report,
      series: this.store.infos(),
      histograms: this.histograms,
      view: this.view,
    };
    if (r.read) message.read = r.read;
    if (notice) message.notice = notice;
    // Without a zoomed window every chart starts with its whole series: the host sends those envelopes right after
    // `init` instead of waiting for the webview to build its views and ask (one round trip less, and the answers are
    // formed while the webview builds). A zoomed window is the webview's to ask for.
    const pushWidth = this.view.window === undefined ? this.readyWidthPx : undefined;
    if (pushWidth !== undefined) message.envelopesFollow = true;
    this.initPostedAt = performance.now();
    if (this.post(message) && pushWidth !== undefined) this.pushEnvelopes(this.store, this.revision, pushWidth);
    this.resendRuns();
  }

  private fail(message: string): void {
    this.error = message;
    this.post({ type: 'status', state: 'error', message, uri: this.uri.toString() });
  }

  private onMessage(raw: unknown): void {
    const msg = parseWebviewMessage(raw);
    if (typeof msg === 'string') {
      this.host.output.warn(`ignored a message from the panel of ${this.uri.fsPath}: ${msg}`);
      return;
    }
    switch (msg.type) {
      case 'ready':
        this.ready = true;
        this.readyWidthPx = msg.widthPx;
        if (msg.view) this.view = { ...this.view, ...msg.view };
        if (this.result) this.sendInit(undefined);
        else if (this.error !== undefined && !this.loading) void this.load('open');
        else this.post({ type: 'status', state: 'loading', uri: this.uri.toString() });
        break;
      case 'series/request':
        if (this.store) this.post(this.timedAnswer(this.store, msg));
        break;
      case 'series/requestBatch': {
        const store = this.store;
        if (store) this.post({ type: 'series/responseBatch', responses: msg.requests.map((r) => this.timedAnswer(store, r)) });
        break;
      }
      case 'reveal/line':
        void this.revealLine(msg);
        break;
      case 'view/didChange':
        this.view = msg.view;
        this.host.didChangeView(this);
        break;
      case 'cursor/didChange':
        this.view = { ...this.view, cursor_s: msg.t };
        if (msg.worstIndex !== undefined) this.view.worstIndex = msg.worstIndex;
        break;
      case 'log/write':
        this.host.output[msg.level === 'info' ? 'info' : msg.level === 'warning' ? 'warn' : 'error'](`panel: ${msg.message}`);
        break;
      case 'notes/request':
      case 'notes/add':
      case 'notes/edit':
      case 'notes/delete':
      case 'code/goto':
      case 'reset/confirm':
      case 'reset/unconfirm':
        notesPanelHooks.onMessage?.(this, msg);
        break;
      case 'report/export':
        void vscode.commands.executeCommand('residuum.exportReport', msg.format);
        break;
      case 'compare/add':
        void pickCompareRuns(this.uri).then((uris) => (uris.length ? this.compareWith(uris) : undefined));
        break;
      case 'compare/align':
        this.compareAlign = msg.align;
        void this.runCompare(false);
        break;
      case 'compare/remove':
        if (msg.run - 1 < this.compareFiles.length) {
          this.compareFiles.splice(msg.run - 1, 1);
          void this.runCompare(false);
        } else this.host.output.warn(`ignored compare/remove: no run #${msg.run}`);
        break;
      case 'compare/export':
        void vscode.commands.executeCommand('residuum.exportComparison', msg.format);
        break;
      case 'montecarlo/pick':
        void pickMonteCarloRuns(this.uri)
          .then((uris) => expandRunUris(uris))
          .then((uris) => (uris.length ? this.monteCarlo(uris) : undefined));
        break;
      default:
        assertNever(msg);
    }
  }

  /**
   * The first envelope of every series of `store` the panel draws (the whole series at `widthPx`; which, and in what
   * order: {@link pushOrder}), posted as `series/responseBatch`es with `id` 0 of about {@link PUSH_BATCH} series each;
   * one batch per turn of the event loop, so each leaves while the next is formed and the host stays responsive.
   * Stops when the panel closed or a newer revision was sent.
   */
  private pushEnvelopes(store: SeriesStore, revision: number, widthPx: number): void {
    const order = pushOrder(store.infos(), this.view.view, new Set(this.histograms.map((h) => h.key)));
    let next = 0;
    const step = (): void => {
      if (this.disposed || this.revision !== revision || this.store !== store || next >= order.length) return;
      const chunk = order.slice(next, next + PUSH_BATCH);
      next += chunk.length;
      this.post({ type: 'series/responseBatch', responses: chunk.map((i) => this.timedAnswer(store, { type: 'series/request', id: 0, key: i.key, widthPx, line: i.xy ? undefined : false })) });
      setImmediate(step);
    };
    step();
  }

  /** The store's answer to `request`, with the milliseconds it took (the editor bench reports them). */
  private timedAnswer(store: SeriesStore, request: SeriesRequestMessage): SeriesResponseMessage {
    const t0 = performance.now();
    const answer = store.answer(request);
    answer.host_ms = performance.now() - t0;
    answer.host_since_init_ms = t0 - this.initPostedAt;
    return answer;
  }

  /** Reveal a 1-based line of one of the run's files beside the panel, selected. */
  private async revealLine(msg: RevealLineMessage): Promise<void> {
    const files = this.result?.files ?? [];
    const index = msg.file ?? 0;
    if (index > 0 && index >= files.length) {
      this.host.output.warn(`ignored reveal/line: no file #${index}`);
      return;
    }
    if (msg.worstIndex !== undefined) this.view = { ...this.view, worstIndex: msg.worstIndex };
    if (msg.t !== undefined) this.view = { ...this.view, cursor_s: msg.t };
    const target = index === 0 ? this.uri : this.resolveFile(files[index]);
    const line = msg.line - 1;
    await vscode.commands.executeCommand('vscode.open', target, {
      // The whole line, with the cursor (selection.active) on it: the end column is clamped to the line's length.
      selection: new vscode.Range(line, 0, line, Number.MAX_SAFE_INTEGER),
      viewColumn: this.columnFor(target),
      preserveFocus: false,
      preview: true,
    } satisfies vscode.TextDocumentShowOptions);
  }

  /**
   * The column of an open tab of `target` outside the panel's group; else the column right of the panel (so the
   * estimator code's column is never taken); else the column beside the active one.
   */
  private columnFor(target: vscode.Uri): vscode.ViewColumn {
    const key = target.toString();
    for (const group of vscode.window.tabGroups.all) {
      if (group.viewColumn === this.panel.viewColumn) continue;
      if (group.tabs.some((t) => t.input instanceof vscode.TabInputText && t.input.uri.toString() === key)) return group.viewColumn;
    }
    const own = this.panel.viewColumn;
    return own !== undefined ? ((own + 1) as vscode.ViewColumn) : vscode.ViewColumn.Beside;
  }

  /**
   * Watch the log and its default mapping file; re-read on change (debounced). The session reads only what was
   * appended, and from the start (with a note) when the log was truncated or replaced or the mapping changed.
   */
  private watch(): void {
    if (this.uri.scheme !== 'file') return;
    const dir = vscode.Uri.file(path.dirname(this.uri.fsPath));
    const base = globEscape(path.basename(this.uri.fsPath));
    const watcher = vscode.workspace.createFileSystemWatcher(new vscode.RelativePattern(dir, `{${base},${base}.map.json}`));
    this.disposables.push(
      watcher,
      watcher.onDidChange(() => this.scheduleReload()),
      watcher.onDidCreate(() => this.scheduleReload()),
      watcher.onDidDelete((u) => {
        if (u.toString() !== this.uri.toString()) return this.scheduleReload();
        this.host.output.warn(`${this.uri.fsPath} was deleted`);
        this.sendInit('The log was deleted; the panel shows its last reading.');
      }),
    );
  }

  private scheduleReload(): void {
    if (this.reloadTimer) clearTimeout(this.reloadTimer);
    this.reloadTimer = setTimeout(() => {
      this.reloadTimer = undefined;
      void this.checkAndReload();
    }, RELOAD_DEBOUNCE_MS);
  }

  private async checkAndReload(): Promise<void> {
    // A deleted log (a delete event may follow) keeps its last reading.
    if ((await this.statSize()) === undefined) return;
    await this.load('change');
  }

  private async statSize(): Promise<number | undefined> {
    try {
      return (await vscode.workspace.fs.stat(this.uri)).size;
    } catch {
      return undefined;
    }
  }
}

/**
 * The analysis panel's webview: restores its state, says `ready`, builds the views from `init`, asks the host for
 * min/max envelopes of each chart's visible window, links cursors and zoom across the time charts, and sends
 * jumps to log lines. Data shaping lives in shape.ts (pure, tested), charts in chart.ts (the only uplot importer),
 * components in ui.ts (the only toolkit importer). Text from the log is set with textContent only.
 *
 * DOM hooks kept for the e2e tests: `<main id="app" data-state="loading|ready|error">`; each chart is
 * `<section class="chart" data-series="KEY" data-points="N">`; `<ol data-testid="worst-list">` of
 * `<button data-line data-t>`; `data-testid="findings-list"`; `data-testid="overview"`;
 * `document.body.dataset.chartsRendered` once every chart (on every view) got its first data. Timing hooks for the
 * editor bench: `body[data-render-timing]`, each time chart's `data-last-timing` and `data-last-envelope-ms`,
 * `body[data-zooms-answered]` and `body[data-last-zoom-all-ms]` (docs/editor.md). `body[data-unasked-undrawn]` counts
 * the envelopes the host sent unasked for a series no chart draws (absent while there is none, as it should be).
 *
 * Envelopes: without a zoomed window the host sends every series' first envelope right after `init` (answers with
 * id 0); otherwise each view asks as it is built, the view on screen first. A zoom asks again only for the charts of
 * the view on screen (the zoomed one first and alone); charts on hidden views are marked stale and catch up when
 * their view is shown.
 */
import { exportButtons } from './export';
import type { Finding } from '../extension/core/report';
import {
  isDrawn,
  parseHostMessage,
  type HistogramInfo,
  type HostToWebviewMessage,
  type InitMessage,
  type ReadyMessage,
  type SeriesInfo,
  type SeriesRequestMessage,
  type SeriesResponseBatchMessage,
  type SeriesResponseMessage,
  type StatusMessage,
  type ViewState,
} from '../extension/protocol';
import { HistogramChart, TimeChart, XyChart, readTheme, type Theme, type XyLayer } from './chart';
import { el, table } from './dom';
import {
  anchorRows,
  centreOn,
  channelRows,
  chartKind,
  fileIndexOf,
  findingLabel,
  flattenBlock,
  groupViews,
  markersFor,
  nextWindow,
  runSummary,
  tableRows,
  worstLabel,
  layerName,
  worstOnPath,
  yAxisLabel,
  legendLabel,
  type WindowAction,
} from './shape';
import { notesView } from './notes';
import { runsView } from './runs';
import { resetAction, resetsSection } from './resets';
import { button, divider, progressRing, registerUi, tabs, type Tabs } from './ui';
import { panelApi } from './vscodeApi';

/** After this long without an answer the in-flight gate opens anyway (a lost answer must not freeze zooming). */
const IN_FLIGHT_GIVE_UP_MS = 1000;

interface TimeEntry {
  kind: 'time';
  /** The view (tab) the chart is on. */
  viewId: string;
  /** The window or selection changed while the chart's view was hidden: redraw and re-query when shown. */
  stale: boolean;
  info: SeriesInfo;
  section: HTMLElement;
  chart: TimeChart;
  tableHost: HTMLElement;
  requestId: number;
  columns?: Columns;
  rendered: boolean;
}

interface XyEntry {
  kind: 'xy';
  viewId: string;
  infos: SeriesInfo[];
  section: HTMLElement;
  chart: XyChart;
  tableHost: HTMLElement;
  requestIds: Map<string, number>;
  columns: Map<string, Columns>;
  rendered: boolean;
}

interface HistogramEntry {
  kind: 'histogram';
  viewId: string;
  section: HTMLElement;
  chart: HistogramChart;
  rendered: boolean;
}

type Entry = TimeEntry | XyEntry | HistogramEntry;

interface Columns {
  x: Float64Array;
  y: Float64Array;
  lo?: Float64Array;
  hi?: Float64Array;
  line?: Float64Array;
}

const app = document.getElementById('app') as HTMLElement;
let theme: Theme = readTheme();
let uri = '';
let view: ViewState = {};
let init: InitMessage | undefined;
let entries: Entry[] = [];
let nextRequestId = 1;
const pendingByRequest = new Map<number, Entry>();
/** The chart of each series key, for the envelopes the host sends after `init` unasked (`id` 0). */
const entryByKey = new Map<string, TimeEntry | XyEntry>();
let extent: [number, number] = [0, 1];
/** The id of the view (tab) on screen: only its charts follow a zoom at once, the others when shown. */
let activeView = 'overview';
/** Ids of the zoom requests not answered yet, and when they were sent (the in-flight gate). */
const zoomInFlight = new Set<number>();
let zoomSentAt = 0;
let requeryOrigin: TimeChart | undefined;
/** A zoom came while a batch was in flight: ask again when it is answered. */
let zoomWanted = false;
/** Zoom batches fully answered (a hook for the editor bench). */
let zoomsAnswered = 0;
let firstRenderReported = false;
/** performance.now() of each request's post, and of the last user zoom/pan (for the timing hooks the bench reads). */
const sentAt = new Map<number, number>();
let userWindowAt = -1;
let initAt = -1;
let builtAt = -1;
let readyAt = -1;
let firstDrawnAt = -1;
/** Milliseconds of long tasks (over 50 ms) on this page since the latest init, where the browser reports them. */
let longTasks_ms = 0;
let drawTotal_ms = 0;
let hostTotal_ms = 0;
let firstResponseAt = -1;
let lastResponseAt = -1;
let responses = 0;
let firstHostSinceInit_ms = -1;
let lastHostSinceInit_ms = -1;
let currentTabs: Tabs | undefined;
/** Envelopes the host sent unasked (`id` 0) for series no chart draws (a hook for the e2e tests; should stay 0). */
let unaskedUndrawn = 0;

function log(level: 'info' | 'warning' | 'error', message: string): void {
  panelApi.post({ type: 'log/write', level, message });
}

let lastPosted = '';

/** Keep the view state with the webview (setState) and tell the host when it changed (see ViewDidChangeMessage). */
function persist(): void {
  if (!uri) return;
  panelApi.setState({ uri, view });
  // Only once a revision is shown: before that the view is the host's to give (a panel opened again in a state).
  const text = JSON.stringify(view);
  if (init && text !== lastPosted) {
    lastPosted = text;
    panelApi.post({ type: 'view/didChange', view: { ...view } });
  }
}

function toFloat64(b: ArrayBuffer | ArrayBufferView | undefined): Float64Array | undefined {
  if (b === undefined) return undefined;
  if (b instanceof ArrayBuffer) return new Float64Array(b);
  return new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
}

/** `ready`, with the restored view state if any and the pixel width new charts ask their envelopes at. */
function readyMessage(): ReadyMessage {
  const msg: ReadyMessage = { type: 'ready', widthPx: newChartWidthPx() };
  if (view.view || view.window || view.cursor_s !== undefined) msg.view = view;
  return msg;
}

/** The envelope width of a chart not drawn yet (TimeChart.plotWidthPx before its plot exists). */
function newChartWidthPx(): number {
  return Math.min(16384, Math.max(1, Math.round(chartWidth() - 70)));
}

function chartWidth(): number {
  return Math.max(280, Math.floor((app.clientWidth || document.body.clientWidth || 800) - 40));
}

// ---------------------------------------------------------------------------------------------------------------
// Status (loading, error)

function showStatus(msg: StatusMessage): void {
  uri = msg.uri;
  persist();
  if (msg.state === 'error') {
    destroyCharts();
    init = undefined;
    app.dataset.state = 'error';
    app.setAttribute('aria-busy', 'false');
    app.replaceChildren(
      el('h1', {}, 'The log could not be analysed'),
      el('p', { class: 'error', role: 'alert' }, msg.message ?? 'Unknown error.'),
      button('Try again', () => panelApi.post(readyMessage()), 'primary'),
    );
    return;
  }
  if (init) {
    const banner = app.querySelector('.reloading');
    if (banner) banner.textContent = 'Re-reading the log…';
    return;
  }
  app.dataset.state = 'loading';
  app.setAttribute('aria-busy', 'true');
  const percent = msg.progress !== undefined ? ` ${Math.round(msg.progress * 100)}%` : '';
  app.replaceChildren(el('div', { class: 'loading' }, progressRing(), el('p', { role: 'status' }, `Reading the log…${percent}`)));
}

// ---------------------------------------------------------------------------------------------------------------
// Building the views

/**
 * Facts of the revision shown, as attributes of `main#app` for tests and the editor bench: the log's URI, the
 * revision, the epochs analysed, and which bytes of the log the host read for it (a growing log is read from the last byte read).
 */
function markRevision(message: InitMessage): void {
  app.dataset.uri = message.uri;
  app.dataset.revision = String(message.revision);
  app.dataset.epochs = String(message.report.time.epochs);
  const read = message.read;
  if (read) {
    app.dataset.readMode = read.mode;
    app.dataset.readStart = String(read.start);
    app.dataset.readBytes = String(read.bytes);
    app.dataset.readTotal = String(read.total);
    if (read.restarted) app.dataset.readRestarted = read.restarted;
    else delete app.dataset.readRestarted;
  }
}

function destroyCharts(): void {
  for (const e of entries) e.chart.destroy();
  entries = [];
  entryByKey.clear();
  pendingByRequest.clear();
  zoomInFlight.clear();
  zoomWanted = false;
  requeryOrigin = undefined;
}

function render(message: InitMessage): void {
  initAt = performance.now();
  firstDrawnAt = -1;
  longTasks_ms = 0;
  drawTotal_ms = 0;
  hostTotal_ms = 0;
  firstResponseAt = -1;
  responses = 0;
  destroyCharts();
  init = message;
  uri = message.uri;
  view = { ...message.view, ...view };
  const report = message.report;
  const timeSeries = message.series.filter((s) => chartKind(s) === 'time' && Number.isFinite(s.x0) && s.x1 >= s.x0);
  extent = timeSeries.length
    ? [Math.min(...timeSeries.map((s) => s.x0)), Math.max(...timeSeries.map((s) => s.x1))]
    : [report.time.start ?? 0, report.time.end ?? 1];
  if (!(extent[1] > extent[0])) extent = [extent[0], extent[0] + 1];
  if (view.window && !(view.window[0] < extent[1] && view.window[1] > extent[0])) view.window = undefined;

  const groups = [...groupViews(message.series, report), { id: 'compare', label: 'Compare', series: [] }, { id: 'montecarlo', label: 'Monte Carlo', series: [] }];
  const wanted = runsView.takeWanted();
  if (wanted) view.view = wanted;
  const active = groups.some((g) => g.id === view.view) ? (view.view as string) : 'overview';
  const t = tabs(
    groups.map((g) => ({ id: g.id, label: g.label, count: g.id === 'overview' ? report.findings.length : undefined })),
    active,
    (id) => {
      view.view = id;
      persist();
      showView(id);
    },
  );
  activeView = active;
  const header = el('header', {}, el('h1', {}, message.logName), el('p', { class: 'reloading', role: 'status' }));
  header.append(exportButtons((format) => panelApi.post({ type: 'report/export', format })));
  if (message.notice) header.append(el('p', { class: 'notice', role: 'status' }, message.notice));
  app.replaceChildren(header, t.root);
  currentTabs = t;

  const width = chartWidth();
  // The view on screen is built first, and each view's envelopes are asked for as soon as its charts exist: the host
  // forms the answers while the other views are built.
  const buildOrder = [...groups].sort((a, b) => (a.id === active ? 0 : 1) - (b.id === active ? 0 : 1));
  for (const g of buildOrder) {
    const host = t.views.get(g.id);
    if (!host) continue;
    if (g.id === 'overview') buildOverview(host, message);
    else if (g.id !== 'compare' && g.id !== 'montecarlo') {
      buildGroup(host, g.id, g.series, message, width);
      if (!message.envelopesFollow) requestView(g.id);
      else if (view.window) send(linkedTimeCharts().filter((e) => e.viewId === g.id).flatMap(wantedOf)); // zoomed: not what the host sends
    }
  }
  const compareHost = t.views.get('compare');
  const monteCarloHost = t.views.get('montecarlo');
  if (compareHost && monteCarloHost) {
    runsView.mount(
      {
        width: chartWidth,
        theme: () => theme,
        focus: (id) => {
          view.view = id;
          persist();
          currentTabs?.select(id);
          showView(id);
        },
      },
      compareHost,
      monteCarloHost,
    );
  }
  app.dataset.state = 'ready';
  readyAt = performance.now();
  app.setAttribute('aria-busy', 'false');
  markRevision(message);
  persist();
  builtAt = performance.now();
  applySelection();
  maybeReportRendered();
}

function buildOverview(host: HTMLElement, message: InitMessage): void {
  const report = message.report;
  host.dataset.testid = 'overview';
  host.setAttribute('data-testid', 'overview');
  const summary = el('dl', { class: 'summary' });
  for (const [k, v] of runSummary(report)) summary.append(el('dt', {}, k), el('dd', {}, v));
  host.append(el('h2', {}, 'Run'), summary);

  const rows = channelRows(report);
  const channels = table(
    'Channels: share of NIS inside the 95% chi-square bounds (about 95% when the filter is consistent)',
    ['Channel', 'dof', 'Updates', 'Rejected', 'Outliers', 'Mean NIS', 'Inside 95%', 'Ljung-Box p'],
    rows.map((r) => [r.name, r.dof, r.updates, r.rejected, r.outliers, r.nisMean, r.inside95, r.whitenessP]),
  );
  channels.classList.add('channels');
  rows.forEach((r, i) => channels.tBodies[0]?.rows[i]?.classList.add(`verdict-${r.verdict}`));
  host.append(el('h2', {}, 'Consistency at a glance'), rows.length ? channels : el('p', {}, 'No measurement channels in this log.'));
  const resets = resetsSection(report);
  if (resets) host.append(resets);

  host.append(el('h2', { id: 'worst-heading' }, `Worst epochs (${report.worst.length})`));
  const worst = el('ol', { 'data-testid': 'worst-list', class: 'pick-list', 'aria-labelledby': 'worst-heading' });
  report.worst.forEach((w, i) => {
    const b = el('button', { type: 'button', 'data-line': String(w.line), 'data-t': String(w.t), 'data-index': String(i) }, worstLabel(w));
    b.addEventListener('click', () => {
      select(w.t, i);
      panelApi.post({ type: 'reveal/line', line: w.line, t: w.t, worstIndex: i });
    });
    worst.append(el('li', {}, b));
  });
  host.append(report.worst.length ? worst : el('p', {}, 'No updates outside the gate.'));

  host.append(el('h2', { id: 'findings-heading' }, `Findings (${report.findings.length})`));
  const findings = el('ol', { 'data-testid': 'findings-list', class: 'pick-list', 'aria-labelledby': 'findings-heading' });
  report.findings.forEach((f) => findings.append(el('li', { class: `finding kind-${safeClass(f.kind)}` }, findingItem(f, message.files), ...[resetAction(f)].filter((x): x is HTMLButtonElement => x !== undefined))));
  host.append(report.findings.length ? findings : el('p', {}, 'No findings.'));
  host.append(divider());
  notesView.mount(host, message, () => view, (t) => select(t, undefined));
}

function safeClass(s: string): string {
  return s.replace(/[^a-z0-9-]/gi, '_');
}

function findingItem(f: Finding, files: readonly string[]): Node {
  const label = findingLabel(f);
  if (f.line === undefined && f.t === undefined) return document.createTextNode(label);
  const attrs: Record<string, string> = { type: 'button' };
  if (f.line !== undefined) attrs['data-line'] = String(f.line);
  if (f.t !== undefined) attrs['data-t'] = String(f.t);
  const b = el('button', attrs, label);
  b.addEventListener('click', () => {
    if (f.t !== undefined) select(f.t, undefined);
    if (f.line !== undefined && f.line >= 1) panelApi.post({ type: 'reveal/line', line: f.line, file: fileIndexOf(f, files), t: f.t });
  });
  return b;
}

function chartSection(key: string, label: string, unit: string): { section: HTMLElement; plot: HTMLElement; tableHost: HTMLElement; details: HTMLDetailsElement } {
  const section = el('section', { class: 'chart', 'data-series': key, 'data-points': '0', tabindex: '0' });
  const title = unit && unit !== '1' ? `${label} [${unit}]` : label;
  section.setAttribute('aria-label', `${title}. Arrow keys pan, plus and minus zoom, Home resets, Enter opens the table.`);
  const plot = el('div', { class: 'plot', 'aria-hidden': 'true' });
  const tableHost = el('div', { class: 'table-host' });
  const details = el('details', {}, el('summary', {}, `Table of ${title}`), tableHost);
  section.append(el('h3', {}, title), plot, details);
  return { section, plot, tableHost, details };
}

function buildGroup(host: HTMLElement, id: string, all: readonly SeriesInfo[], message: InitMessage, width: number): void {
  const report = message.report;
  const histogramKeys = new Set(message.histograms.map((h) => h.key));
  const series = all.filter((s) => isDrawn(s, histogramKeys));
  const xy = series.filter((s) => chartKind(s) === 'xy');
  const anchors = message.series.find((s) => s.key === 'uwb/anchors');
  if (id === 'trajectory' && xy.length) {
    const layers = anchors && !xy.includes(anchors) ? [...xy, anchors] : xy;
    addXyChart(host, id, layers, 'Trajectory from above', width);
  } else {
    for (const s of xy) addXyChart(host, id, [s], s.label, width);
  }
  for (const s of series) {
    const kind = chartKind(s);
    if (kind === 'xy') continue;
    addTimeChart(host, id, s, kind, report, width);
    if (s.key.startsWith('nis/')) {
      const h = message.histograms.find((x) => x.key === s.key);
      if (h) addHistogram(host, id, h, width);
    }
  }
  const block = id === 'errors' ? report.errors : id === 'bias' ? report.bias : id === 'uwb' ? report.uwb : id === 'allan' ? report.imu ?? allanFigures(report.bias) : undefined;
  if (id === 'uwb') {
    const rows = anchorRows(report);
    if (rows.length) {
      const t = table('UWB anchors (suspect anchors first in the findings)', ['Anchor', 'Updates', 'Mean NIS', 'Outliers', 'Suspect', 'Reason'], rows.map((r) => [r.id, r.updates, r.nisMean, r.outliers, r.suspect ? 'yes' : '', r.reason]));
      rows.forEach((r, i) => r.suspect && t.tBodies[0]?.rows[i]?.classList.add('suspect'));
      host.append(el('h2', {}, 'Anchors'), t);
    }
  }
  if (block !== undefined) {
    const rows = flattenBlock(id === 'uwb' && typeof block === 'object' && block !== null ? { ...(block as Record<string, unknown>), anchors: undefined } : block);
    if (rows.length) host.append(el('h2', {}, id === 'allan' ? 'Noise figures read off the Allan deviation' : 'Figures'), table('Report figures', ['Figure', 'Value'], rows));
  }
  if (!host.childElementCount) host.append(el('p', {}, 'Nothing to show for this log.'));
}

/** The Allan read-off figures inside the bias block (any key containing "allan"), for the Allan view. */
function allanFigures(bias: unknown): unknown {
  if (typeof bias !== 'object' || bias === null) return undefined;
  const out: Record<string, unknown> = {};
  for (const [sensor, block] of Object.entries(bias as Record<string, unknown>)) {
    if (/allan/i.test(sensor)) out[sensor] = block;
    else if (typeof block === 'object' && block !== null) {
      for (const [k, v] of Object.entries(block as Record<string, unknown>)) if (/allan|noise|randomWalk|instability/i.test(k)) out[`${sensor}.${k}`] = v;
    }
  }
  return Object.keys(out).length ? out : undefined;
}

function addTimeChart(host: HTMLElement, viewId: string, info: SeriesInfo, kind: 'time' | 'loglog' | 'plain', report: InitMessage['report'], width: number): void {
  const { section, plot, tableHost, details } = chartSection(info.key, info.label, info.unit);
  host.append(section);
  const ownExtent: [number, number] = kind === 'time' ? extent : [info.x0, info.x1];
  const chart = new TimeChart(
    plot,
    {
      label: info.label,
      legend: legendLabel(info.label),
      unit: info.unit,
      axisLabel: yAxisLabel(info),
      kind,
      band: info.band,
      extent: ownExtent,
      markers: markersFor(info.key, report),
      noteMarkers: () => notesView.markerTimes(),
      syncKey: 'residuum-time',
      onWindow: (t0, t1) => onUserWindow(t0, t1, chart),
      onPick: (t) => {
        select(t, undefined);
        panelApi.post({ type: 'cursor/didChange', t });
      },
    },
    width,
    () => theme,
  );
  if (kind === 'time' && view.window) chart.setWindow(view.window[0], view.window[1]);
  const entry: TimeEntry = { kind: 'time', viewId, stale: false, info, section, chart, tableHost, requestId: 0, rendered: false };
  entries.push(entry);
  entryByKey.set(info.key, entry);
  details.addEventListener('toggle', () => {
    if (!details.open) return;
    fillTable(entry);
    // Answers without the line column came while the table was closed: ask once more, with it.
    if (entry.columns && !entry.columns.line) send([{ entry, key: info.key, window: kind === 'time' ? chart.visibleWindow() : undefined }]);
  });
  if (kind === 'time') section.addEventListener('keydown', (e) => onChartKey(e, chart, details));
}

function addXyChart(host: HTMLElement, viewId: string, infos: SeriesInfo[], label: string, width: number): void {
  const { section, plot, tableHost, details } = chartSection(infos[0].key, label, infos[0].unit || 'm');
  section.dataset.layers = infos.map((i) => i.key).join(' ');
  host.append(section);
  // Request id 0 per layer: the envelopes the host sends after `init` unasked are this chart's until it asks itself.
  const entry: XyEntry = { kind: 'xy', viewId, infos, section, chart: new XyChart(plot, infos[0].unit || 'm', width, () => theme), tableHost, requestIds: new Map(infos.map((i) => [i.key, 0])), columns: new Map(), rendered: false };
  entries.push(entry);
  for (const i of infos) if (!entryByKey.has(i.key)) entryByKey.set(i.key, entry);
  details.addEventListener('toggle', () => details.open && fillTable(entry));
}

function addHistogram(host: HTMLElement, viewId: string, h: HistogramInfo, width: number): void {
  const key = `histogram/${h.key}`;
  const { section, plot, tableHost } = chartSection(key, `Histogram of ${h.key} against chi-square (${h.dof} dof)`, '');
  host.append(section);
  const chart = new HistogramChart(plot, 'NIS', width, () => theme);
  const points = chart.setBins(h.edges, h.counts, h.expected);
  section.dataset.points = String(points);
  const rows = h.counts.map((c, i) => [`${h.edges[i].toPrecision(3)} – ${h.edges[i + 1].toPrecision(3)}`, String(c), h.expected[i].toFixed(1)]);
  rows.push([`≥ ${h.edges[h.edges.length - 1].toPrecision(3)}`, String(h.overflow), (h.total * 0.005).toFixed(1)]);
  tableHost.append(table(`NIS histogram, ${h.total} values`, ['NIS bin', 'Count', 'Expected'], rows));
  entries.push({ kind: 'histogram', viewId, section, chart, rendered: true });
}

// ---------------------------------------------------------------------------------------------------------------
// Envelope requests and responses

/** One envelope to ask for: a chart, the key of one of its series, the window (absent: the whole series). */
interface Wanted {
  entry: TimeEntry | XyEntry;
  key: string;
  window?: [number, number];
}

/**
 * Whether a chart's answers should carry the source-line column: planar paths always (the worst epochs are placed
 * by line), time charts only while their table is open (the line is a table column; leaving it out makes every
 * answer a fifth to a third smaller).
 */
function wantsLine(entry: TimeEntry | XyEntry): boolean {
  return entry.kind === 'xy' || (entry.tableHost.parentElement as HTMLDetailsElement | null)?.open === true;
}

function requestMessage(w: Wanted): SeriesRequestMessage {
  const { entry, key, window } = w;
  const id = nextRequestId++;
  pendingByRequest.set(id, entry);
  sentAt.set(id, performance.now());
  if (entry.kind === 'time') entry.requestId = id;
  else entry.requestIds.set(key, id);
  const widthPx = entry.kind === 'time' ? entry.chart.plotWidthPx() : 1;
  const msg: SeriesRequestMessage = { type: 'series/request', id, key, widthPx: Math.min(16384, Math.max(1, widthPx)) };
  if (!wantsLine(entry)) msg.line = false;
  if (window) {
    msg.t0 = window[0];
    msg.t1 = window[1];
  }
  return msg;
}

/** Ask for `wanted` in one message (one request, or a batch answered by one batch); returns the request ids. */
function send(wanted: readonly Wanted[]): number[] {
  if (!wanted.length) return [];
  const requests = wanted.map(requestMessage);
  panelApi.post(requests.length === 1 ? requests[0] : { type: 'series/requestBatch', requests });
  return requests.map((r) => r.id);
}

function wantedOf(e: TimeEntry | XyEntry): Wanted[] {
  if (e.kind === 'xy') return e.infos.map((i) => ({ entry: e, key: i.key }));
  return [{ entry: e, key: e.info.key, window: chartKindOf(e) === 'time' ? e.chart.visibleWindow() : undefined }];
}

/**
 * The first envelopes of view `id`'s charts, in one batch. Called as each view is built, the view on screen first:
 * the host answers in order, so the charts the user sees are not queued behind the hidden ones, and those are drawn
 * as their answers come, one view per message, so the page can paint between them.
 */
function requestView(id: string): void {
  send(entries.filter((e): e is TimeEntry | XyEntry => e.viewId === id && e.kind !== 'histogram').flatMap(wantedOf));
}

function chartKindOf(e: TimeEntry): 'time' | 'loglog' | 'plain' {
  const k = chartKind(e.info);
  return k === 'xy' ? 'plain' : k;
}

function linkedTimeCharts(): TimeEntry[] {
  return entries.filter((e): e is TimeEntry => e.kind === 'time' && chartKindOf(e) === 'time');
}

/**
 * Ask again for the envelopes of the time charts on screen, at once: the one the user zoomed alone first (its answer
 * is small and not queued behind the others), then the other linked charts of the view in one batch. The charts on
 * hidden views were marked stale by {@link onUserWindow} and are asked for when their view is shown. While a zoom's
 * requests are unanswered the next zoom waits for them (then asks for the latest window), so a held key does not
 * queue dozens of answers.
 */
function requeryTimeCharts(origin?: TimeChart): void {
  if (origin) requeryOrigin = origin;
  flushRequery();
}

function flushRequery(): void {
  if (zoomInFlight.size > 0 && performance.now() - zoomSentAt < IN_FLIGHT_GIVE_UP_MS) {
    zoomWanted = true; // resumed in onResponse
    return;
  }
  zoomInFlight.clear();
  const origin = requeryOrigin;
  requeryOrigin = undefined;
  const charts = linkedTimeCharts().filter((e) => e.viewId === activeView);
  // The linked window (the other charts' own windows are set just after the requests leave, in onUserWindow).
  const window = view.window ?? extent;
  const wanted = (list: TimeEntry[]): Wanted[] => list.map((e) => ({ entry: e, key: e.info.key, window }));
  const first = charts.filter((e) => e.chart === origin);
  const rest = charts.filter((e) => e.chart !== origin);
  for (const id of [...send(wanted(first)), ...send(wanted(rest))]) zoomInFlight.add(id);
  zoomSentAt = performance.now();
}

/** The view `id` came on screen: its charts that missed a zoom, a pan or a selection catch up. */
function showView(id: string): void {
  if (id === activeView) return;
  activeView = id;
  const stale = linkedTimeCharts().filter((e) => e.viewId === id && e.stale);
  if (!stale.length) return;
  const window = view.window ?? extent;
  for (const e of stale) {
    e.stale = false;
    e.chart.select(view.cursor_s);
    e.chart.setWindow(window[0], window[1]);
  }
  send(stale.flatMap(wantedOf));
}

function onResponseBatch(msg: SeriesResponseBatchMessage): void {
  for (const r of msg.responses) onResponse(r);
}

function onResponse(msg: SeriesResponseMessage): void {
  const zoomAnswer = zoomInFlight.delete(msg.id);
  drawResponse(msg);
  if (zoomAnswer && zoomInFlight.size === 0) {
    // Every chart on screen shows the zoom: the time since the user's zoom, for the editor bench.
    document.body.dataset.lastZoomAllMs = (performance.now() - userWindowAt).toFixed(1);
    document.body.dataset.zoomsAnswered = String(++zoomsAnswered);
    if (zoomWanted || requeryOrigin !== undefined) {
      zoomWanted = false;
      requeryTimeCharts();
    }
  }
}

function drawResponse(msg: SeriesResponseMessage): void {
  const tRecv = performance.now();
  // id 0: an envelope the host sent after `init` unasked; it is drawn only if the chart has not asked since.
  const entry = msg.id === 0 ? entryByKey.get(msg.key) : pendingByRequest.get(msg.id);
  pendingByRequest.delete(msg.id);
  const tSent = sentAt.get(msg.id) ?? tRecv;
  if (!firstRenderReported) {
    if (firstResponseAt < 0) {
      firstResponseAt = tRecv;
      firstHostSinceInit_ms = msg.host_since_init_ms ?? -1;
    }
    lastHostSinceInit_ms = (msg.host_since_init_ms ?? -1) + (msg.host_ms ?? 0);
    lastResponseAt = tRecv;
    responses++;
    hostTotal_ms += msg.host_ms ?? 0;
  }
  sentAt.delete(msg.id);
  if (!entry && msg.id === 0) {
    // Sent unasked for a series no chart draws: wasted work on the host (extension/host/seriesStore.ts pushOrder).
    document.body.dataset.unaskedUndrawn = String(++unaskedUndrawn);
    log('warning', `the host sent an envelope of ${msg.key}, which no chart draws`);
  }
  if (!entry || entry.kind === 'histogram') return;
  if (msg.error) log('warning', `series ${msg.key}: ${msg.error}`);
  const columns: Columns = {
    x: toFloat64(msg.x) ?? new Float64Array(0),
    y: toFloat64(msg.y) ?? new Float64Array(0),
    lo: toFloat64(msg.lo),
    hi: toFloat64(msg.hi),
    line: toFloat64(msg.line),
  };
  if (entry.kind === 'time') {
    if (msg.id !== entry.requestId) return; // a newer window was asked for
    entry.columns = columns;
    const points = entry.chart.setData(columns.x, columns.y, columns.lo, columns.hi);
    const tDrawn = performance.now();
    drawTotal_ms += tDrawn - tRecv;
    if (firstDrawnAt < 0) firstDrawnAt = tDrawn;
    if (msg.host_ms !== undefined) entry.section.dataset.lastEnvelopeMs = msg.host_ms.toFixed(2);
    entry.section.dataset.lastTiming = JSON.stringify({
      sinceUser_ms: userWindowAt >= 0 ? +(tSent - userWindowAt).toFixed(1) : undefined,
      roundTrip_ms: +(tRecv - tSent).toFixed(1),
      host_ms: msg.host_ms !== undefined ? +msg.host_ms.toFixed(2) : undefined,
      draw_ms: +(tDrawn - tRecv).toFixed(1),
      points,
      bytes: msg.x.byteLength * (2 + (msg.lo ? 1 : 0) + (msg.hi ? 1 : 0) + (msg.line ? 1 : 0)),
      pending: pendingByRequest.size,
    });
    entry.section.dataset.points = String(points);
    entry.rendered = true;
  } else {
    if (entry.requestIds.get(msg.key) !== msg.id) return;
    entry.columns.set(msg.key, columns);
    if (entry.columns.size === entry.infos.length) drawXy(entry);
  }
  const details = entry.section.querySelector('details');
  if (details?.open) fillTable(entry);
  maybeReportRendered();
}

function drawXy(entry: XyEntry): void {
  const layers: XyLayer[] = [];
  let path: Columns | undefined;
  // Reference paths are drawn over the estimate (a thin line stays visible over a noisy one), anchors over both.
  const rank = (key: string): number => (key === 'uwb/anchors' ? 2 : /reference|truth|gt/i.test(key) ? 1 : 0);
  for (const info of [...entry.infos].sort((a, b) => rank(a.key) - rank(b.key))) {
    const c = entry.columns.get(info.key);
    if (!c) continue;
    const isAnchors = info.key === 'uwb/anchors';
    const isReference = /reference|truth|gt/i.test(info.key);
    if (!isAnchors && !isReference && !path) path = c;
    layers.push({
      label: layerName(info),
      x: c.x,
      y: c.y,
      style: isAnchors ? 'points' : 'path',
      color: (t) => (isAnchors ? t.points : isReference ? t.reference : t.line),
    });
  }
  if (path && init) {
    const marks = worstOnPath(init.report.worst, path.x, path.y, path.line);
    if (marks.x.length) layers.push({ label: 'worst epochs', x: marks.x, y: marks.y, style: 'marks', color: (t) => t.marker });
  }
  const points = entry.chart.setLayers(layers);
  entry.section.dataset.points = String(points);
  entry.rendered = true;
}

function fillTable(entry: TimeEntry | XyEntry): void {
  const blocks: HTMLElement[] = [];
  const sources = entry.kind === 'time' ? [[entry.info, entry.columns] as const] : entry.infos.map((i) => [i, entry.columns.get(i.key)] as const);
  for (const [info, c] of sources) {
    if (!c) continue;
    const { rows, total } = tableRows(c);
    const header = [info.xy ? 'x' : info.logLog ? 'tau [s]' : 't [s]', info.xy ? 'y' : info.label];
    if (c.lo) header.push('lower');
    if (c.hi) header.push('upper');
    if (c.line) header.push('line');
    const caption = rows.length < total ? `${info.label}: ${rows.length} of the ${total} points drawn` : `${info.label}: ${total} points`;
    blocks.push(table(caption, header, rows));
  }
  entry.tableHost.replaceChildren(...blocks);
}

function maybeReportRendered(): void {
  if (firstRenderReported) return;
  if (!entries.every((e) => e.rendered)) return;
  firstRenderReported = true;
  const now = performance.now();
  const since = (t: number): number => +(t - initAt).toFixed(1);
  document.body.dataset.renderTiming = JSON.stringify({
    build_ms: since(builtAt),
    // The bench's ready -> charts on the page's own clock: from data-state=ready to the first time chart drawn and to
    // every chart drawn (a poll from outside sees `ready` late when the page is busy right after it).
    readyToFirstDrawn_ms: +(firstDrawnAt - readyAt).toFixed(1),
    readyToAllDrawn_ms: +(now - readyAt).toFixed(1),
    longTasks_ms: +longTasks_ms.toFixed(1),
    firstAnswer_ms: since(firstResponseAt),
    lastAnswer_ms: since(lastResponseAt),
    toAllDrawn_ms: since(now),
    host_ms: +hostTotal_ms.toFixed(1),
    hostFirstStart_ms: +firstHostSinceInit_ms.toFixed(1),
    hostLastEnd_ms: +lastHostSinceInit_ms.toFixed(1),
    draw_ms: +drawTotal_ms.toFixed(1),
    answers: responses,
    charts: entries.length,
  });
  document.body.dataset.chartsRendered = String(entries.length);
}

// ---------------------------------------------------------------------------------------------------------------
// Cursor, selection, zoom and pan

function onUserWindow(t0: number, t1: number, origin?: TimeChart): void {
  userWindowAt = performance.now();
  view.window = [t0, t1];
  const linked = linkedTimeCharts();
  for (const e of linked) if (e.viewId !== activeView) e.stale = true; // no redraw of hidden canvases: see showView
  // The requests first, then the redraws of the linked charts (their old points on the new scale) while the host
  // forms the answers.
  requeryTimeCharts(origin);
  persist();
  for (const e of linked) if (e.chart !== origin && e.viewId === activeView) e.chart.setWindow(t0, t1);
}

function onChartKey(e: KeyboardEvent, chart: TimeChart, details: HTMLDetailsElement): void {
  const actions: Record<string, WindowAction> = { ArrowLeft: 'panLeft', ArrowRight: 'panRight', '+': 'zoomIn', '=': 'zoomIn', '-': 'zoomOut', Home: 'reset' };
  if (e.key === 'Enter' && e.target === e.currentTarget) {
    details.open = !details.open;
    e.preventDefault();
    return;
  }
  const action = actions[e.key];
  if (!action || e.target !== e.currentTarget) return;
  e.preventDefault();
  chart.userWindow(nextWindow(chart.visibleWindow(), extent, action));
}

function select(t: number, worstIndex: number | undefined): void {
  view.cursor_s = t;
  view.worstIndex = worstIndex;
  persist();
  applySelection();
}

function applySelection(): void {
  const t = view.cursor_s;
  if (t !== undefined) {
    const current: [number, number] = view.window ?? extent;
    const w = centreOn(current, extent, t);
    if (w !== current) onUserWindow(w[0], w[1]);
  }
  for (const e of entries) {
    if (e.kind !== 'time') continue;
    if (e.viewId === activeView || chartKindOf(e) !== 'time') e.chart.select(t);
    else e.stale = true;
  }
  for (const b of app.querySelectorAll<HTMLButtonElement>('[data-testid="worst-list"] button')) {
    const on = view.worstIndex !== undefined && b.dataset.index === String(view.worstIndex);
    if (on) {
      b.setAttribute('aria-current', 'true');
      b.scrollIntoView({ block: 'nearest' });
    } else b.removeAttribute('aria-current');
  }
}

// ---------------------------------------------------------------------------------------------------------------
// Wiring

function onMessage(msg: HostToWebviewMessage): void {
  switch (msg.type) {
    case 'init':
      render(msg);
      break;
    case 'series/response':
      onResponse(msg);
      break;
    case 'series/responseBatch':
      onResponseBatch(msg);
      break;
    case 'cursor/set':
      select(msg.t, msg.worstIndex);
      break;
    case 'status':
      showStatus(msg);
      break;
    case 'notes/update':
      notesView.update(msg);
      for (const e of entries) e.chart.redraw();
      break;
    case 'compare/update':
      runsView.compare(msg);
      break;
    case 'montecarlo/update':
      runsView.monteCarlo(msg);
      break;
  }
}

function start(): void {
  registerUi();
  try {
    new PerformanceObserver((list) => {
      for (const e of list.getEntries()) longTasks_ms += e.duration;
    }).observe({ type: 'longtask', buffered: false });
  } catch {
    // no long-task timing in this browser: the hook stays 0
  }
  const saved = panelApi.getState();
  if (saved) {
    uri = saved.uri;
    view = { ...saved.view };
  }
  window.addEventListener('message', (e: MessageEvent<unknown>) => {
    const msg = parseHostMessage(e.data);
    if (!msg) return;
    try {
      onMessage(msg);
    } catch (err) {
      log('error', `handling ${msg.type}: ${err instanceof Error ? err.stack ?? err.message : String(err)}`);
    }
  });
  let resizeTimer: ReturnType<typeof setTimeout> | undefined;
  let lastWidth = chartWidth();
  window.addEventListener('resize', () => {
    if (resizeTimer) clearTimeout(resizeTimer);
    resizeTimer = setTimeout(() => {
      const w = chartWidth();
      if (w === lastWidth) return; // e.g. a scrollbar came or went: nothing to redraw
      lastWidth = w;
      for (const e of entries) e.chart.resize(w);
      for (const e of linkedTimeCharts()) if (e.viewId !== activeView) e.stale = true;
      runsView.resize(w);
      requeryTimeCharts();
    }, 150);
  });
  new MutationObserver(() => {
    theme = readTheme();
    for (const e of entries) e.chart.redraw();
    runsView.redraw();
  }).observe(document.body, { attributes: true, attributeFilter: ['class'] });
  window.addEventListener('error', (e) => log('error', `${e.message} (${e.filename}:${e.lineno})`));
  panelApi.post(readyMessage());
}

start();

/**
 * Development harness for the panel's webview outside VS Code: stands in for the extension host with a small
 * invented run (a warehouse loop; demo data only, not a check of any figure), answering `series/request` with the
 * real SeriesStore. Bundled by run.mjs into a page with dist/webview.js and driven by headless Chromium.
 */
import type { Report } from '../../../extension/core/report';
import type { Series } from '../../../extension/core/series';
import { nisHistogram } from '../../../extension/host/histogram';
import { SeriesStore } from '../../../extension/host/seriesStore';
import type { HostToWebviewMessage, InitMessage, SeriesResponseMessage, WebviewToHostMessage } from '../../../extension/protocol';

/** The browser globals used here, typed locally (this file is also type-checked by the Node tsconfig, without DOM). */
const page = globalThis as unknown as {
  location: { search: string };
  dispatchEvent(e: unknown): void;
  MessageEvent: new (type: string, init: { data: unknown }) => unknown;
};
const N = Number(new URLSearchParams(page.location.search).get('n') ?? '200000');
const t = new Float64Array(N).map((_, i) => i * 0.01);
let seed = 1;
const rnd = (): number => ((seed = (seed * 16807) % 2147483647) / 2147483647);
const gauss = (): number => Math.sqrt(-2 * Math.log(rnd() + 1e-12)) * Math.cos(2 * Math.PI * rnd());
const nis = new Float64Array(N).map(() => gauss() ** 2);
nis[12345] = 144.2;
const line = new Float64Array(N).map((_, i) => i + 2);
const lo = new Float64Array(N).fill(0.001);
const hi = new Float64Array(N).fill(5.02);
const err = new Float64Array(N).map(() => gauss() * 0.05);
const sig = new Float64Array(N).fill(0.15);
const px = new Float64Array(N).map((_, i) => 10 * Math.cos(i * 1e-4));
const py = new Float64Array(N).map((_, i) => 6 * Math.sin(i * 1e-4));
const bias = new Float64Array(N).map((_, i) => (i > N / 2 ? 0.02 : 0) + gauss() * 0.001);
const tau = new Float64Array(30).map((_, i) => 0.01 * 1.4 ** i);
const adev = tau.map((x) => 0.002 / Math.sqrt(x) + 0.0001 * Math.sqrt(x));
if (N > 100) nis[100] = NaN;

const series: Series[] = [
  { key: 'nis/tdoa', group: 'innovations', label: 'NIS tdoa', unit: '1', x: t, y: nis, line, lo, hi },
  { key: 'innovation/tdoa/0', group: 'innovations', label: 'innovation tdoa', unit: 'm', x: t, y: err, line },
  { key: 'error/position/x', group: 'errors', label: 'position error x', unit: 'm', x: t, y: err, lo: sig.map((s) => -3 * s), hi: sig.map((s) => 3 * s) },
  { key: 'trajectory/estimate', group: 'trajectory', label: 'estimate', unit: 'm', x: px, y: py, line },
  { key: 'trajectory/reference', group: 'trajectory', label: 'reference', unit: 'm', x: px.map((v) => v + 0.1), y: py },
  { key: 'uwb/anchors', group: 'uwb', label: 'anchors', unit: 'm', x: new Float64Array([-12, 12, 12, -12]), y: new Float64Array([-8, -8, 8, 8]) },
  { key: 'bias/gyro/x', group: 'bias', label: 'gyro bias x', unit: 'rad/s', x: t, y: bias },
  { key: 'allan/gyro/x', group: 'allan', label: 'Allan deviation gyro x', unit: 'rad/s', x: tau, y: adev, logLog: true },
];

const report: Report = {
  schema: 'residuum.report/1',
  tool: { version: '0.0.0-harness' },
  source: { path: 'warehouse-harness.csv', format: 'csv', rows: N + 1, files: ['warehouse-harness.csv'] },
  settings: { confidence: 0.95, gate: 0.999, window_s: 5, imuPreset: 'consumer' },
  partial: false,
  time: { start: 0, end: t[N - 1], epochs: N, medianDt: 0.01 },
  channels: [{ name: 'tdoa <b>x</b>', dof: 1, updates: N, rejected: 0, outliers: 3, nis: { mean: 1.01, inside95: 0.948, bounds95: [0.001, 5.02] }, whiteness: { lags: 20, ljungBoxP: 0.41 } }],
  bias: { gyro: { final: [0.02, 0, 0], steps: [{ t: t[Math.floor(N / 2)], axis: 0, size: 0.02 }], allan: { angleRandomWalk: 0.002 } } },
  uwb: { anchors: [{ id: '<img src=x onerror=alert(1)>', updates: 10, nis: { mean: 4 }, outliers: 2, suspect: true, reason: 'NIS mean 4.0' }, { id: '2', updates: 12, nis: { mean: 1 }, outliers: 0, suspect: false }], dop: { kind: 'PDOP', median: 1.4 } },
  notes: [],
  findings: [
    { kind: 'outlier', t: 123.45, line: 12347, channel: 'tdoa', score: 144.2, p: 1e-33, message: 'NIS 144.2 is beyond the 99.9% gate (10.8) for 1 dof' },
    { kind: 'bias-step', t: t[Math.floor(N / 2)], message: 'gyro x bias stepped by 0.02 rad/s' },
  ],
  worst: [
    { t: 123.45, line: 12347, channel: 'tdoa', score: 144.2, p: 1e-33 },
    { t: 5, line: 502, channel: 'tdoa', score: 12, p: 5e-4 },
  ],
};

const store = new SeriesStore(series, 5000);
const listeners: ((m: WebviewToHostMessage) => void)[] = [];
const sent: WebviewToHostMessage[] = [];
(globalThis as unknown as { harness: unknown }).harness = { sent, post: (m: HostToWebviewMessage) => deliver(m) };

function deliver(m: HostToWebviewMessage): void {
  setTimeout(() => page.dispatchEvent(new page.MessageEvent('message', { data: m })), 0);
}

/** With `?real=1` the page asks run.mjs, which holds the real analysis of a log (realHost.ts). */
const real = new URLSearchParams(page.location.search).get('real') === '1';
type JsonColumns = Record<'x' | 'y' | 'lo' | 'hi' | 'line', (number | null)[] | undefined>;
const toBuffer = (a: (number | null)[] | undefined): ArrayBuffer | undefined => (a ? new Float64Array(a.map((v) => (v === null ? NaN : v))).buffer : undefined);

listeners.push((m) => {
  if (!real) return;
  sent.push(m);
  if (m.type === 'ready') void fetch('/real/init').then((r) => r.json() as Promise<InitMessage>).then((init) => deliver(init));
  // A batch is answered one response at a time here (the panel takes both forms).
  for (const q of m.type === 'series/requestBatch' ? m.requests : m.type === 'series/request' ? [m] : []) {
    void fetch('/real/series', { method: 'POST', body: JSON.stringify(q) })
      .then((r) => r.json() as Promise<Omit<SeriesResponseMessage, 'x' | 'y' | 'lo' | 'hi' | 'line'> & JsonColumns>)
      .then((a) => {
        const out: SeriesResponseMessage = { ...a, x: toBuffer(a.x) ?? new ArrayBuffer(0), y: toBuffer(a.y) ?? new ArrayBuffer(0), lo: toBuffer(a.lo), hi: toBuffer(a.hi), line: toBuffer(a.line) };
        for (const k of ['lo', 'hi', 'line'] as const) if (out[k] === undefined) delete out[k];
        deliver(out);
      });
  }
});

listeners.push((m) => {
  if (real) return;
  sent.push(m);
  if (m.type === 'ready') {
    const init: InitMessage = {
      type: 'init',
      revision: 1,
      uri: 'file:///harness/warehouse-harness.csv',
      logName: 'warehouse-harness.csv',
      files: ['warehouse-harness.csv'],
      report,
      series: store.infos(),
      histograms: [nisHistogram('nis/tdoa', nis, 1)],
      view: {},
    };
    deliver(init);
  } else if (m.type === 'series/request') deliver(store.answer(m));
  else if (m.type === 'series/requestBatch') deliver({ type: 'series/responseBatch', responses: m.requests.map((q) => store.answer(q)) });
});

let state: unknown;
(globalThis as unknown as { acquireVsCodeApi: () => unknown }).acquireVsCodeApi = () => ({
  postMessage: (m: WebviewToHostMessage) => listeners.forEach((l) => l(m)),
  getState: () => state,
  setState: (s: unknown) => (state = s),
});

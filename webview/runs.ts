/**
 * The panel's views built from several runs: "Compare" (this log against other runs: figures side by side with
 * differences and the better run, the common span, overlay charts on one time axis) and "Monte Carlo" (the N-run
 * average NEES and NIS per epoch with their chi2(N n)/N interval as a band, and the share of epochs inside).
 * The host computes both in its worker thread and sends `compare/update` and `montecarlo/update`; this module keeps
 * the latest of each, so a re-render of the panel (after `init`) shows them again. Text from logs via textContent.
 *
 * DOM hooks kept for the e2e tests: `[data-testid="compare-view"][data-state]`, `[data-testid="compare-span"]`,
 * `table[data-testid="compare-figures"]` (one per channel or error block, `data-group`), overlay charts as
 * `section.chart[data-series="overlay/KEY"][data-points][data-runs]`; `[data-testid="montecarlo-view"][data-state]`,
 * `table[data-testid="montecarlo-summary"]`, band charts as `section.chart[data-series="montecarlo/..."][data-band]`.
 */
import type { CompareAlign, CompareUpdateMessage, MonteCarloUpdateMessage } from '../extension/protocol';
import { OverlayChart, TimeChart, type Theme } from './chart';
import { el, table } from './dom';
import { formatNumber, tableRows } from './shape';
import { betterCounts, figureGroups, monteCarloRow, overlayColumns, overlayTableRows, runRow, spanText, alignText } from './runsShape';
import { button, progressRing } from './ui';
import { panelApi } from './vscodeApi';

/** What the views need from the panel. */
export interface RunsContext {
  width(): number;
  theme(): Theme;
  /** Show a view (tab) by id. */
  focus(id: 'compare' | 'montecarlo'): void;
}

interface Drawn {
  redraw(): void;
  resize(width: number): void;
  destroy(): void;
}

let ctx: RunsContext | undefined;
let compareHost: HTMLElement | undefined;
let monteCarloHost: HTMLElement | undefined;
let lastCompare: CompareUpdateMessage | undefined;
let lastMonteCarlo: MonteCarloUpdateMessage | undefined;
let pendingFocus: 'compare' | 'montecarlo' | undefined;
let compareCharts: Drawn[] = [];
let monteCarloCharts: Drawn[] = [];

function destroy(list: Drawn[]): void {
  for (const c of list) c.destroy();
  list.length = 0;
}

function toFloat64(b: ArrayBuffer | ArrayBufferView): Float64Array {
  if (b instanceof ArrayBuffer) return new Float64Array(b);
  return new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
}

function chartSection(key: string, title: string): { section: HTMLElement; plot: HTMLElement; tableHost: HTMLElement } {
  const section = el('section', { class: 'chart', 'data-series': key, 'data-points': '0', tabindex: '0' });
  section.setAttribute('aria-label', `${title}. Drag to zoom, double click resets; Enter opens the table.`);
  const plot = el('div', { class: 'plot', 'aria-hidden': 'true' });
  const tableHost = el('div', { class: 'table-host' });
  const details = el('details', {}, el('summary', {}, `Table of ${title}`), tableHost);
  section.append(el('h3', {}, title), plot, details);
  section.addEventListener('keydown', (e) => {
    if (e.key === 'Enter' && e.target === e.currentTarget) {
      details.open = !details.open;
      e.preventDefault();
    }
  });
  return { section, plot, tableHost };
}

/** Smallest and largest finite value of `x` (a unit span when there is none or one). */
function finiteExtent(x: Float64Array): [number, number] {
  let x0 = Infinity;
  let x1 = -Infinity;
  for (const v of x) {
    if (!Number.isFinite(v)) continue;
    x0 = Math.min(x0, v);
    x1 = Math.max(x1, v);
  }
  if (!Number.isFinite(x0)) return [0, 1];
  return x1 > x0 ? [x0, x1] : [x0, x0 + 1];
}

function stateBlock(state: 'empty' | 'loading' | 'error', message: string | undefined, empty: string): HTMLElement {
  if (state === 'loading') return el('div', { class: 'loading' }, progressRing(), el('p', { role: 'status' }, message ?? 'Reading the runs…'));
  if (state === 'error') return el('p', { class: 'error', role: 'alert' }, message ?? 'The runs could not be read.');
  return el('p', {}, empty);
}

// ---------------------------------------------------------------------------------------------------------------
// Compare

function alignControl(msg: CompareUpdateMessage): HTMLElement {
  const id = 'compare-align';
  const select = el('select', { id, 'data-testid': 'compare-align' });
  const options: { value: string; align: CompareAlign }[] = [
    { value: 'time', align: { by: 'time' } },
    { value: 'start', align: { by: 'start' } },
    ...msg.eventKinds.map((k) => ({ value: `event:${k}`, align: { by: 'event', kind: k } as CompareAlign })),
  ];
  if (msg.align.by === 'event' && !msg.eventKinds.includes(msg.align.kind)) options.push({ value: `event:${msg.align.kind}`, align: msg.align });
  const current = msg.align.by === 'event' ? `event:${msg.align.kind}` : msg.align.by;
  for (const o of options) {
    const opt = el('option', { value: o.value }, alignText(o.align));
    if (o.value === current) opt.selected = true;
    select.append(opt);
  }
  select.addEventListener('change', () => {
    const o = options.find((x) => x.value === select.value);
    if (o) panelApi.post({ type: 'compare/align', align: o.align });
  });
  return el('span', { class: 'align' }, el('label', { for: id }, 'Align runs '), select);
}

function drawCompare(): void {
  const host = compareHost;
  const msg = lastCompare;
  if (!host || !ctx) return;
  destroy(compareCharts);
  const state = msg?.state ?? 'empty';
  host.setAttribute('data-testid', 'compare-view');
  host.dataset.state = state;
  const toolbar = el('div', { class: 'export', role: 'group', 'aria-label': 'Comparison' }, button('Add runs...', () => panelApi.post({ type: 'compare/add' }), 'primary'));
  if (msg && state === 'ready') {
    toolbar.append(button('Export comparison...', () => panelApi.post({ type: 'compare/export', format: 'html' })), button('Comparison as Markdown...', () => panelApi.post({ type: 'compare/export', format: 'md' })));
  }
  if (msg && msg.runs.length > 1) toolbar.append(alignControl(msg));
  host.replaceChildren(el('h2', {}, 'Compare runs'), toolbar);
  if (!msg || state !== 'ready') {
    if (msg && msg.runs.length > 1) host.append(runsTable(msg));
    host.append(stateBlock(state === 'ready' ? 'empty' : state, msg?.message, 'Add one or more other runs of this estimator (Add runs..., or select several logs in the explorer and choose Residuum: Compare Runs) to see their figures side by side.'));
    return;
  }
  const labels = msg.runs.map((r) => r.label);
  host.append(runsTable(msg), el('p', { 'data-testid': 'compare-span', class: 'span' }, spanText(msg.span, msg.align)));
  const wins = betterCounts(msg.figures, msg.runs.length);
  host.append(el('p', {}, `Better in: ${msg.runs.map((r, i) => `${r.label} ${wins[i]}`).join(', ')} figures (of ${msg.figures.length}).`));
  for (const g of figureGroups(msg.figures, labels)) {
    const header = ['Figure', ...labels, ...labels.slice(1).map((l) => `${l} − ${labels[0]}`), 'Better', 'Rule'];
    const caption = g.kind === 'channel' ? `Channel ${g.title}` : `${g.title[0].toUpperCase()}${g.title.slice(1)} errors`;
    const t = table(caption, header, g.rows.map((r) => [r.what, ...r.values, ...r.deltas, r.better, r.rule]));
    t.setAttribute('data-testid', 'compare-figures');
    t.dataset.group = g.title;
    t.classList.add('compare');
    g.rows.forEach((r, i) => {
      const row = t.tBodies[0]?.rows[i];
      if (row && r.best !== undefined) row.cells[1 + r.best]?.classList.add('better');
    });
    host.append(el('h3', {}, caption), t);
  }
  if (msg.overlays.length) host.append(el('h2', {}, 'Overlays on the common time axis'));
  for (const o of msg.overlays) {
    const cols = overlayColumns(o);
    const title = o.unit && o.unit !== '1' ? `${o.label} [${o.unit}]` : o.label;
    const { section, plot, tableHost } = chartSection(`overlay/${o.key}`, title);
    section.dataset.runs = String(cols.runs.length);
    host.append(section);
    const curves = cols.runs.map((run) => ({ run, label: `${labels[run] ?? '?'} ${msg.runs[run]?.name ?? ''}` }));
    const chart = new OverlayChart(plot, { label: o.label, unit: o.unit, curves, syncKey: 'residuum-runs' }, ctx.width(), ctx.theme);
    section.dataset.points = String(chart.setData(cols.x, cols.ys));
    compareCharts.push(chart);
    const { rows, total } = overlayTableRows(cols);
    const caption = rows.length < total ? `${o.label}: ${rows.length} of ${total} common times` : `${o.label}: ${total} common times`;
    tableHost.append(table(caption, ['common t [s]', ...curves.map((c) => c.label)], rows));
  }
}

function runsTable(msg: CompareUpdateMessage): HTMLElement {
  const t = table('Compared runs (A is this log; differences are against A)', ['Run', 'File', 'SHA-256', 'Offset', 'Own-time window', 'Cropped', ''], msg.runs.map(runRow).map((r) => [...r, '']));
  t.setAttribute('data-testid', 'compare-runs');
  msg.runs.forEach((_, i) => {
    if (i === 0) return;
    const cell = t.tBodies[0]?.rows[i]?.cells[6];
    const b = el('button', { type: 'button', class: 'link' }, 'Remove');
    b.setAttribute('aria-label', `Remove run ${msg.runs[i].label} from the comparison`);
    b.addEventListener('click', () => panelApi.post({ type: 'compare/remove', run: i }));
    cell?.append(b);
  });
  return t;
}

// ---------------------------------------------------------------------------------------------------------------
// Monte Carlo

function drawMonteCarlo(): void {
  const host = monteCarloHost;
  const msg = lastMonteCarlo;
  if (!host || !ctx) return;
  destroy(monteCarloCharts);
  const state = msg?.state ?? 'empty';
  host.setAttribute('data-testid', 'montecarlo-view');
  host.dataset.state = state;
  const toolbar = el('div', { class: 'export', role: 'group', 'aria-label': 'Monte Carlo' }, button('Choose runs...', () => panelApi.post({ type: 'montecarlo/pick' }), 'primary'));
  host.replaceChildren(el('h2', {}, 'Monte Carlo consistency'), toolbar);
  if (msg && msg.files.length) host.append(el('p', {}, `${msg.runs} runs: `, ...msg.files.flatMap((f, i) => [i ? ', ' : '', el('code', {}, f)])));
  if (!msg || state !== 'ready') {
    host.append(stateBlock(state === 'ready' ? 'empty' : state, msg?.message, 'Choose N runs of one scenario (a folder of logs, or several logs; this log is included) to see the N-run average NEES and NIS per epoch against their chi2(N n)/N bounds.'));
    return;
  }
  host.append(
    el('p', {}, `At each epoch the average over the runs present (N) is compared with the two-sided 95% interval chi2(N·dof)/N (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4); about 95% of epochs fall inside when the filter is consistent.`),
  );
  const summary = table('N-run averages: share of epochs inside their 95% interval', ['Quantity', 'dof', 'Epochs', 'Mean', 'Inside 95%', 'Interval (all N runs)'], msg.series.map(monteCarloRow));
  summary.setAttribute('data-testid', 'montecarlo-summary');
  host.append(summary);
  for (const n of msg.notes) host.append(el('p', { class: 'notice' }, n));
  for (const s of msg.series) {
    const x = toFloat64(s.x);
    const y = toFloat64(s.y);
    const lo = toFloat64(s.lo);
    const hi = toFloat64(s.hi);
    const title = `${s.kind === 'nees' ? 'NEES' : 'NIS'} ${s.name}: average over ${msg.runs} runs (${s.dof} dof) with its interval`;
    const { section, plot, tableHost } = chartSection(s.key, title);
    section.dataset.band = '1';
    host.append(section);
    const chart = new TimeChart(plot, { label: title, unit: '1', axisLabel: `average ${s.kind === 'nees' ? 'NEES' : 'NIS'}`, kind: 'time', band: true, extent: finiteExtent(x), markers: [], syncKey: 'residuum-montecarlo' }, ctx.width(), ctx.theme);
    section.dataset.points = String(chart.setData(x, y, lo, hi));
    monteCarloCharts.push(chart);
    const { rows, total } = tableRows({ x, y, lo, hi });
    const caption = rows.length < total ? `${title}: ${rows.length} of the ${total} points drawn` : `${title}: ${total} points`;
    tableHost.append(table(caption, ['t [s]', 'average', 'lower', 'upper'], rows));
    section.append(el('p', { class: 'figure' }, `Inside the interval at ${s.inside95 !== undefined ? `${(s.inside95 * 100).toFixed(1)}%` : '–'} of ${s.epochs} epochs; mean ${formatNumber(s.mean, 4)}.`));
  }
}

// ---------------------------------------------------------------------------------------------------------------
// API for main.ts

function focus(id: 'compare' | 'montecarlo'): void {
  if (ctx && compareHost) ctx.focus(id);
  else pendingFocus = id;
}

/** The views of several runs. */
export const runsView = {
  /** Attach to the panel's (new) compare and Monte Carlo view elements and draw the latest content there. */
  mount(context: RunsContext, compare: HTMLElement, monteCarlo: HTMLElement): void {
    ctx = context;
    compareHost = compare;
    monteCarloHost = monteCarlo;
    drawCompare();
    drawMonteCarlo();
  },
  /** New compare content from the host. */
  compare(msg: CompareUpdateMessage): void {
    lastCompare = { ...msg, focus: false };
    drawCompare();
    if (msg.focus) focus('compare');
  },
  /** New Monte Carlo content from the host. */
  monteCarlo(msg: MonteCarloUpdateMessage): void {
    lastMonteCarlo = { ...msg, focus: false };
    drawMonteCarlo();
    if (msg.focus) focus('montecarlo');
  },
  /** A view asked for before the panel was drawn (so `render` opens it), once. */
  takeWanted(): 'compare' | 'montecarlo' | undefined {
    const w = pendingFocus;
    pendingFocus = undefined;
    return w;
  },
  /** Charts redraw with the current theme. */
  redraw(): void {
    for (const c of [...compareCharts, ...monteCarloCharts]) c.redraw();
  },
  /** New width for every chart. */
  resize(width: number): void {
    for (const c of [...compareCharts, ...monteCarloCharts]) c.resize(width);
  },
};

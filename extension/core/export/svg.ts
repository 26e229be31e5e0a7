/**
 * Static SVG line charts for the exported HTML report: no script, no external resource, every label escaped.
 * Curves are drawn from the min/max envelope (core/envelope.ts) so a spike is never lost however long the log;
 * NaN/null values break a line. Coordinates: SVG user units, y down; data y up.
 */
import { envelope, isAscending } from '../envelope';
import { escapeHtml } from './escape';

/** One curve. `x` ascending unless the chart is `planar`. */
export interface ChartLine {
  label: string;
  x: ArrayLike<number>;
  y: ArrayLike<number | null>;
  /** Dashed stroke (e.g. bounds drawn as lines). */
  dashed?: boolean;
}

/** A shaded band (bounds, +-3 sigma) under the curves. */
export interface ChartBand {
  x: ArrayLike<number>;
  lo: ArrayLike<number>;
  hi: ArrayLike<number>;
}

/** What one chart shows. */
export interface ChartSpec {
  title: string;
  /** Unit of y (plain text; empty for none). */
  unit: string;
  /** Label of the x axis. */
  xLabel: string;
  lines: ChartLine[];
  band?: ChartBand;
  /** x and y share one scale (a trajectory seen from above); x need not be ascending. */
  planar?: boolean;
}

/** Stroke colours by curve index (distinct on a white page, also for common colour-vision deficiencies). */
export const CHART_COLOURS = ['#1f5fbf', '#d9480f', '#2b8a3e', '#862e9c', '#c92a2a', '#495057', '#e67700', '#0b7285'];

/** Most points drawn per curve. */
const MAX_POINTS = 1600;

/** Round step for about `count` ticks over [lo, hi]. */
export function niceTicks(lo: number, hi: number, count = 5): number[] {
  if (!(hi > lo)) return [lo];
  const raw = (hi - lo) / count;
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 2.5, 5, 10].map((m) => m * mag).find((s) => s >= raw) ?? 10 * mag;
  const out: number[] = [];
  for (let v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) out.push(Math.abs(v) < step * 1e-9 ? 0 : v);
  return out;
}

/** A tick value without trailing zeros (ticks are round numbers). */
export function tickLabel(v: number): string {
  if (v !== 0 && (Math.abs(v) >= 1e6 || Math.abs(v) < 1e-3)) return v.toExponential(1);
  return String(Number(v.toPrecision(6)));
}

/** Reduce a curve to at most about MAX_POINTS points (min/max envelope when x ascends, else a stride). */
function reduce(x: ArrayLike<number>, y: ArrayLike<number | null>): { x: Float64Array; y: Float64Array } {
  const n = Math.min(x.length, y.length);
  const xs = Float64Array.from({ length: n }, (_, i) => x[i]);
  const ys = Float64Array.from({ length: n }, (_, i) => (y[i] === null ? NaN : (y[i] as number)));
  if (n <= MAX_POINTS) return { x: xs, y: ys };
  if (isAscending(xs)) {
    const e = envelope({ x: xs, y: ys }, xs[0], xs[n - 1], MAX_POINTS / 2);
    return { x: e.x, y: e.y };
  }
  const stride = Math.ceil(n / MAX_POINTS);
  const k = Math.ceil(n / stride);
  const rx = new Float64Array(k);
  const ry = new Float64Array(k);
  for (let i = 0, j = 0; i < n; i += stride, j++) {
    rx[j] = xs[i];
    ry[j] = ys[i];
  }
  return { x: rx, y: ry };
}

function extent(values: Iterable<number>, into: [number, number]): void {
  for (const v of values) {
    if (!Number.isFinite(v)) continue;
    if (v < into[0]) into[0] = v;
    if (v > into[1]) into[1] = v;
  }
}

/** Reduce a band to about MAX_POINTS points; where buckets form, each point carries its bucket's lowest `lo` and highest `hi`. */
function reduceBand(b: ChartBand): { x: Float64Array; lo: Float64Array; hi: Float64Array } {
  const n = Math.min(b.x.length, b.lo.length, b.hi.length);
  const x = Float64Array.from({ length: n }, (_, i) => b.x[i]);
  const lo = Float64Array.from({ length: n }, (_, i) => b.lo[i]);
  const hi = Float64Array.from({ length: n }, (_, i) => b.hi[i]);
  if (n <= MAX_POINTS || !isAscending(x)) return { x, lo, hi };
  const mid = Float64Array.from({ length: n }, (_, i) => (lo[i] + hi[i]) / 2);
  const e = envelope({ x, y: mid, lo, hi }, x[0], x[n - 1], MAX_POINTS / 2);
  return { x: e.x, lo: e.lo ?? lo, hi: e.hi ?? hi };
}

/** An SVG chart (a string of markup) of the spec; `width` x `height` user units. */
export function svgChart(spec: ChartSpec, width = 760, height = 260): string {
  const lines = spec.lines.map((l) => ({ ...l, ...reduce(l.x, l.y) }));
  const band = spec.band ? reduceBand(spec.band) : undefined;
  const xr: [number, number] = [Infinity, -Infinity];
  const yr: [number, number] = [Infinity, -Infinity];
  for (const l of lines) {
    for (let i = 0; i < l.x.length; i++) {
      if (!Number.isFinite(l.x[i]) || !Number.isFinite(l.y[i])) continue;
      extent([l.x[i]], xr);
      extent([l.y[i]], yr);
    }
  }
  if (band) {
    extent(band.lo, yr);
    extent(band.hi, yr);
  }
  const title = escapeHtml(spec.title);
  if (!(xr[1] >= xr[0]) || !(yr[1] >= yr[0])) {
    return `<svg class="chart" xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${width} 40" role="img" aria-label="${title}"><text x="8" y="24">${title}: no data</text></svg>`;
  }
  if (xr[1] === xr[0]) { xr[0] -= 0.5; xr[1] += 0.5; }
  if (yr[1] === yr[0]) { yr[0] -= Math.abs(yr[0]) * 0.1 || 0.5; yr[1] += Math.abs(yr[1]) * 0.1 || 0.5; }
  const m = { left: 64, right: 12, top: 26, bottom: 40 };
  let pw = width - m.left - m.right;
  let ph = height - m.top - m.bottom;
  if (spec.planar) {
    // One scale for both axes: widen the narrower range.
    const sx = (xr[1] - xr[0]) / pw;
    const sy = (yr[1] - yr[0]) / ph;
    const s = Math.max(sx, sy);
    const cx = (xr[0] + xr[1]) / 2;
    const cy = (yr[0] + yr[1]) / 2;
    xr[0] = cx - (s * pw) / 2; xr[1] = cx + (s * pw) / 2;
    yr[0] = cy - (s * ph) / 2; yr[1] = cy + (s * ph) / 2;
  }
  const X = (v: number): number => m.left + ((v - xr[0]) / (xr[1] - xr[0])) * pw;
  const Y = (v: number): number => m.top + ph - ((v - yr[0]) / (yr[1] - yr[0])) * ph;
  const r = (v: number): string => (Math.round(v * 10) / 10).toString();
  const parts: string[] = [];
  parts.push(`<svg class="chart" xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${width} ${height}" role="img" aria-label="${title}">`);
  parts.push(`<title>${title}</title>`);
  parts.push(`<rect x="${m.left}" y="${m.top}" width="${pw}" height="${ph}" fill="#fff" stroke="#adb5bd"/>`);
  // Grid and tick labels.
  for (const t of niceTicks(xr[0], xr[1], 8)) {
    parts.push(`<line x1="${r(X(t))}" y1="${m.top}" x2="${r(X(t))}" y2="${m.top + ph}" stroke="#e9ecef"/>`);
    parts.push(`<text x="${r(X(t))}" y="${m.top + ph + 14}" text-anchor="middle" font-size="10">${escapeHtml(tickLabel(t))}</text>`);
  }
  for (const t of niceTicks(yr[0], yr[1], 5)) {
    parts.push(`<line x1="${m.left}" y1="${r(Y(t))}" x2="${m.left + pw}" y2="${r(Y(t))}" stroke="#e9ecef"/>`);
    parts.push(`<text x="${m.left - 4}" y="${r(Y(t) + 3)}" text-anchor="end" font-size="10">${escapeHtml(tickLabel(t))}</text>`);
  }
  parts.push(`<text x="${m.left + pw / 2}" y="${height - 6}" text-anchor="middle" font-size="11">${escapeHtml(spec.xLabel)}</text>`);
  parts.push(`<text x="${m.left}" y="16" font-size="12" font-weight="bold">${title}${spec.unit ? ` [${escapeHtml(spec.unit)}]` : ''}</text>`);
  if (band) {
    // The band as closed polygons over its finite stretches.
    let d = '';
    let run: number[] = [];
    const flush = (): void => {
      if (run.length >= 2) {
        d += `M${run.map((i) => `${r(X(band.x[i]))},${r(Y(band.hi[i]))}`).join('L')}`;
        d += `L${run.slice().reverse().map((i) => `${r(X(band.x[i]))},${r(Y(band.lo[i]))}`).join('L')}Z`;
      }
      run = [];
    };
    for (let i = 0; i < band.x.length; i++) {
      if (Number.isFinite(band.x[i]) && Number.isFinite(band.lo[i]) && Number.isFinite(band.hi[i])) run.push(i);
      else flush();
    }
    flush();
    if (d) parts.push(`<path class="band" d="${d}" fill="#1f5fbf" fill-opacity="0.12" stroke="none"/>`);
  }
  lines.forEach((l, k) => {
    let d = '';
    let pen = false;
    for (let i = 0; i < l.x.length; i++) {
      if (!Number.isFinite(l.x[i]) || !Number.isFinite(l.y[i])) {
        pen = false;
        continue;
      }
      d += `${pen ? 'L' : 'M'}${r(X(l.x[i]))},${r(Y(l.y[i]))}`;
      pen = true;
    }
    // A lone point still shows: a zero-length segment with round caps.
    d = d.replace(/M([\d.-]+),([\d.-]+)(?=M|$)/g, 'M$1,$2l0.01,0');
    const colour = CHART_COLOURS[k % CHART_COLOURS.length];
    if (d) parts.push(`<path class="curve" d="${d}" fill="none" stroke="${colour}" stroke-width="1.2" stroke-linecap="round" stroke-linejoin="round"${l.dashed ? ' stroke-dasharray="4 3"' : ''}/>`);
  });
  // Legend.
  let lx = m.left + 8;
  const legend: string[] = [];
  lines.forEach((l, k) => {
    const colour = CHART_COLOURS[k % CHART_COLOURS.length];
    const label = escapeHtml(l.label);
    legend.push(`<line x1="${lx}" y1="${m.top + 10}" x2="${lx + 14}" y2="${m.top + 10}" stroke="${colour}" stroke-width="2"/><text x="${lx + 18}" y="${m.top + 13}" font-size="10">${label}</text>`);
    lx += 28 + Math.min(40, l.label.length) * 6;
  });
  if (lines.length > 1) parts.push(...legend);
  parts.push('</svg>');
  return parts.join('');
}

/**
 * Pure data shaping for the panel: which view a series belongs to, the rows of the overview and tables, chart
 * markers, number formatting, and window arithmetic for zoom and pan. No DOM and no uPlot here, so all of it is
 * unit-tested in Node (test/webview/shape.test.ts).
 *
 * Conventions: times `t` in seconds in the log's own time base; windows are `[t0, t1]` with t0 < t1; `line` 1-based.
 */
import type { Finding, Report, WorstEntry } from '../extension/core/report';
import { ownChart, viewOf, type SeriesInfo } from '../extension/protocol';

/** Known views in display order, with their tab labels. Series of other groups get a view of their own. */
export const KNOWN_VIEWS: readonly { id: string; label: string }[] = [
  { id: 'overview', label: 'Overview' },
  { id: 'innovations', label: 'Innovations & NIS' },
  { id: 'errors', label: 'Errors & NEES' },
  { id: 'trajectory', label: 'Trajectory' },
  { id: 'bias', label: 'Biases' },
  { id: 'allan', label: 'Allan deviation' },
  { id: 'uwb', label: 'UWB anchors' },
];

/** Which view a series is in and whether it has a chart of its own: shared with the host (extension/protocol.ts). */
export { ownChart, viewOf };

/** A view and the series drawn in it. */
export interface ViewGroup {
  id: string;
  label: string;
  series: SeriesInfo[];
}

/** Capitalised label of an unknown group. */
function labelOf(id: string): string {
  return id.length > 0 ? id[0].toUpperCase() + id.slice(1) : id;
}

/**
 * The panel's views in display order: the overview, the known views that have series (the UWB view also when the
 * report has a `uwb` block), then unknown groups in the order their first series appears.
 */
export function groupViews(series: readonly SeriesInfo[], report: Pick<Report, 'uwb'>): ViewGroup[] {
  const byView = new Map<string, SeriesInfo[]>();
  for (const s of series) {
    const v = viewOf(s);
    const list = byView.get(v) ?? [];
    list.push(s);
    byView.set(v, list);
  }
  const out: ViewGroup[] = [{ id: 'overview', label: 'Overview', series: byView.get('overview') ?? [] }];
  for (const known of KNOWN_VIEWS.slice(1)) {
    const list = byView.get(known.id);
    if (list || (known.id === 'uwb' && report.uwb !== undefined)) out.push({ ...known, series: list ?? [] });
  }
  for (const [id, list] of byView) {
    if (!KNOWN_VIEWS.some((k) => k.id === id)) out.push({ id, label: labelOf(id), series: list });
  }
  return out;
}

/** How a series is drawn: over time (linked), log-log, planar, or over another abscissa ('plain': lags, NIS bins). */
export type ChartKind = 'time' | 'loglog' | 'xy' | 'plain';

/** Key prefixes whose x is not time (autocorrelation lags, histogram bins). */
const NON_TIME_PREFIXES = ['acf', 'nisHistogram', 'nisPdf', 'neesHistogram', 'neesPdf', 'histogram', 'pdf'];

/** The kind of chart for a series. */
export function chartKind(info: Pick<SeriesInfo, 'key' | 'logLog' | 'xy'>): ChartKind {
  if (info.logLog) return 'loglog';
  if (info.xy) return 'xy';
  return NON_TIME_PREFIXES.includes(info.key.split('/')[0]) ? 'plain' : 'time';
}

/** Replace NaN (and infinities) by null: uPlot treats only null/undefined as gaps. */
export function gapsToNull(a: ArrayLike<number>): (number | null)[] {
  const out = new Array<number | null>(a.length);
  for (let i = 0; i < a.length; i++) out[i] = Number.isFinite(a[i]) ? a[i] : null;
  return out;
}

/** Replace non-positive and non-finite values by null (log axes cannot show them). */
export function positiveOrNull(a: ArrayLike<number>): (number | null)[] {
  const out = new Array<number | null>(a.length);
  for (let i = 0; i < a.length; i++) out[i] = Number.isFinite(a[i]) && a[i] > 0 ? a[i] : null;
  return out;
}

/** A number for display: `digits` significant figures, exponent form for very small or large values; '–' when absent. */
export function formatNumber(v: unknown, digits = 3): string {
  if (typeof v !== 'number' || !Number.isFinite(v)) return '–';
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a < 1e-3 || a >= 1e6) return v.toExponential(digits - 1);
  return Number(v.toPrecision(digits)).toString();
}

/** A share (0..1) as a percentage with one decimal; '–' when absent. */
export function formatPercent(v: unknown): string {
  return typeof v === 'number' && Number.isFinite(v) ? `${(v * 100).toFixed(1)}%` : '–';
}

/** A time in seconds with millisecond resolution. */
export function formatTime(t: number): string {
  return Number.isFinite(t) ? `${t.toFixed(3)} s` : '–';
}

/** One line describing a worst entry (text only). */
export function worstLabel(w: WorstEntry): string {
  const id = w.id !== undefined ? ` ${w.id}` : '';
  return `t=${formatTime(w.t)} · ${w.channel}${id} · NIS ${formatNumber(w.score)} · p=${formatNumber(w.p, 2)} · line ${w.line}`;
}

/** One line describing a finding (text only). */
export function findingLabel(f: Finding): string {
  const when = f.t !== undefined ? `t=${formatTime(f.t)}${f.tEnd !== undefined ? `–${formatTime(f.tEnd)}` : ''} · ` : '';
  const where = f.line !== undefined ? ` (line ${f.line})` : '';
  return `${f.kind} · ${when}${f.message}${where}`;
}

/** Verdict of a channel's share of NIS inside its 95% bounds (about 0.95 when consistent). */
export type Verdict = 'ok' | 'low' | 'unknown';

/** A row of the channels table. */
export interface ChannelRow {
  name: string;
  dof: string;
  updates: string;
  rejected: string;
  outliers: string;
  nisMean: string;
  inside95: string;
  whitenessP: string;
  verdict: Verdict;
}

/**
 * Rows of the channels' consistency table. The verdict is 'low' when the share inside the 95% bounds is under
 * 0.90 (a common rule-of-thumb margin for a few hundred updates; the findings carry the exact tests).
 */
export function channelRows(report: Pick<Report, 'channels'>): ChannelRow[] {
  return report.channels.map((c) => {
    const inside = c.nis.inside95;
    const verdict: Verdict = typeof inside !== 'number' ? 'unknown' : inside < 0.9 ? 'low' : 'ok';
    return {
      name: c.name,
      dof: String(c.dof),
      updates: String(c.updates),
      rejected: String(c.rejected),
      outliers: String(c.outliers),
      nisMean: formatNumber(c.nis.mean),
      inside95: formatPercent(inside),
      whitenessP: formatNumber(c.whiteness?.ljungBoxP, 2),
      verdict,
    };
  });
}

/** Label/value pairs of the run summary. */
export function runSummary(report: Report): [string, string][] {
  const out: [string, string][] = [
    ['Log', report.source.path],
    // Every file the analysis read (the log, its mapping file and the other files of its run).
    ['Files read', report.source.files.join(', ')],
    ['Format', report.source.format],
    ['Rows', String(report.source.rows)],
    ['Epochs', String(report.time.epochs)],
  ];
  if (report.time.start !== undefined && report.time.end !== undefined) out.push(['Time span', `${formatTime(report.time.start)} – ${formatTime(report.time.end)}`]);
  if (report.time.medianDt !== undefined) out.push(['Median step', formatTime(report.time.medianDt)]);
  out.push(['Channels', String(report.channels.length)]);
  out.push(['Findings', String(report.findings.length)]);
  out.push(['Confidence', formatPercent(report.settings.confidence)]);
  out.push(['Outlier gate', formatPercent(report.settings.gate)]);
  if (report.partial) out.push(['Note', 'partial analysis (decimated to fit the memory budget)']);
  return out;
}

/** Axis names in the order of `bias.<sensor>.steps[].axis`. */
const AXES = ['x', 'y', 'z'];

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/**
 * Vertical markers (x values) for a series: bias steps on `bias/<sensor>/<axis>` (from `report.bias.<sensor>.steps`),
 * the worst updates of a channel on `nis/<channel>`, nothing elsewhere.
 */
export function markersFor(key: string, report: Pick<Report, 'bias' | 'worst'>, maxWorst = 10): number[] {
  const parts = key.split('/');
  if (parts[0] === 'bias' && parts.length >= 3 && isRecord(report.bias)) {
    const sensor = report.bias[parts[1]];
    const axis = AXES.indexOf(parts[2].replace(/^.*_/, ''));
    if (isRecord(sensor) && Array.isArray(sensor.steps)) {
      return sensor.steps
        .filter((s): s is { t: number; axis?: number } => isRecord(s) && typeof s.t === 'number' && Number.isFinite(s.t))
        .filter((s) => s.axis === undefined || s.axis === axis)
        .map((s) => s.t);
    }
    return [];
  }
  if (parts[0] === 'nis' && parts.length === 2) {
    return report.worst.filter((w) => w.channel === parts[1]).slice(0, maxWorst).map((w) => w.t);
  }
  return [];
}

/** Index of the value in ascending `a` nearest to `target` (-1 for an empty array). */
export function nearestIndex(a: ArrayLike<number>, target: number): number {
  if (a.length === 0) return -1;
  let lo = 0;
  let hi = a.length - 1;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (a[mid] < target) lo = mid + 1;
    else hi = mid;
  }
  if (lo > 0 && Math.abs(a[lo - 1] - target) <= Math.abs(a[lo] - target)) return lo - 1;
  return lo;
}

/**
 * Points of a planar path (trajectory) at the worst epochs: for each worst entry, the path point whose source line
 * is nearest to the entry's line (path lines ascend with time). Entries are skipped when the path has no lines.
 */
export function worstOnPath(worst: readonly WorstEntry[], x: ArrayLike<number>, y: ArrayLike<number>, line: ArrayLike<number> | undefined, max = 10): { x: number[]; y: number[] } {
  const out = { x: [] as number[], y: [] as number[] };
  if (!line || line.length === 0) return out;
  for (const w of worst.slice(0, max)) {
    const i = nearestIndex(line, w.line);
    if (i < 0 || !Number.isFinite(x[i]) || !Number.isFinite(y[i])) continue;
    out.x.push(x[i]);
    out.y.push(y[i]);
  }
  return out;
}

/** Zoom and pan actions of the keyboard and wheel. */
export type WindowAction = 'zoomIn' | 'zoomOut' | 'panLeft' | 'panRight' | 'reset';

/**
 * The window after `action` on `current` within the full extent [x0, x1]: zoom by a factor 2 about the centre,
 * pan by a quarter of the width; never beyond the extent, never narrower than `minWidth`.
 */
export function nextWindow(current: [number, number], extent: [number, number], action: WindowAction, minWidth = 1e-6): [number, number] {
  const [x0, x1] = extent;
  if (action === 'reset' || !(x1 > x0)) return [x0, x1];
  let [a, b] = current;
  const width = b - a;
  const centre = (a + b) / 2;
  switch (action) {
    case 'zoomIn': {
      const w = Math.max(minWidth, width / 2);
      a = centre - w / 2;
      b = centre + w / 2;
      break;
    }
    case 'zoomOut': {
      const w = Math.min(x1 - x0, width * 2);
      a = centre - w / 2;
      b = centre + w / 2;
      break;
    }
    case 'panLeft':
      a -= width / 4;
      b -= width / 4;
      break;
    case 'panRight':
      a += width / 4;
      b += width / 4;
      break;
  }
  const w = b - a;
  if (a < x0) { a = x0; b = x0 + w; }
  if (b > x1) { b = x1; a = Math.max(x0, x1 - w); }
  return [a, b];
}

/** A window of the same width as `current` centred on `t`, clamped to the extent (to bring `t` into view). */
export function centreOn(current: [number, number], extent: [number, number], t: number): [number, number] {
  const w = current[1] - current[0];
  if (t >= current[0] && t <= current[1]) return current;
  let a = t - w / 2;
  let b = t + w / 2;
  if (a < extent[0]) { a = extent[0]; b = a + w; }
  if (b > extent[1]) { b = extent[1]; a = Math.max(extent[0], b - w); }
  return [a, b];
}

/**
 * Ranges for x and y that show [xMin, xMax] x [yMin, yMax] with equal metres per pixel on both axes (a trajectory
 * seen from above must not be stretched), in a plot of `widthPx` x `heightPx`, with a 5% margin.
 */
export function equalAspect(xMin: number, xMax: number, yMin: number, yMax: number, widthPx: number, heightPx: number): { x: [number, number]; y: [number, number] } {
  const spanX = Math.max(xMax - xMin, 1e-9);
  const spanY = Math.max(yMax - yMin, 1e-9);
  const perPx = Math.max(spanX / Math.max(1, widthPx), spanY / Math.max(1, heightPx)) * 1.05;
  const cx = (xMin + xMax) / 2;
  const cy = (yMin + yMax) / 2;
  const hx = (perPx * widthPx) / 2;
  const hy = (perPx * heightPx) / 2;
  return { x: [cx - hx, cx + hx], y: [cy - hy, cy + hy] };
}

/** Rows (strings) of a chart's table equivalent: at most `max` of the drawn points, evenly spread. */
export function tableRows(
  columns: { x: ArrayLike<number>; y: ArrayLike<number>; lo?: ArrayLike<number>; hi?: ArrayLike<number>; line?: ArrayLike<number> },
  max = 200,
): { rows: string[][]; total: number } {
  const n = columns.x.length;
  const step = Math.max(1, Math.ceil(n / max));
  const rows: string[][] = [];
  for (let i = 0; i < n; i += step) {
    const row = [formatNumber(columns.x[i], 6), formatNumber(columns.y[i], 4)];
    if (columns.lo) row.push(formatNumber(columns.lo[i], 4));
    if (columns.hi) row.push(formatNumber(columns.hi[i], 4));
    if (columns.line) row.push(Number.isFinite(columns.line[i]) ? String(columns.line[i]) : '–');
    rows.push(row);
  }
  return { rows, total: n };
}

/**
 * A report block (any JSON) flattened to `[path, value]` rows for a generic table, so blocks this panel does not
 * know still show. Short arrays of numbers are joined (longer ones are counted: the charts show them); nesting
 * deeper than `maxDepth` or beyond `maxRows` is cut.
 */
export function flattenBlock(value: unknown, maxRows = 200, maxDepth = 4, maxArray = 8): [string, string][] {
  const out: [string, string][] = [];
  const walk = (v: unknown, path: string, depth: number): void => {
    if (out.length >= maxRows) return;
    if (v === null || v === undefined) return;
    if (typeof v === 'number') out.push([path, formatNumber(v, 4)]);
    else if (typeof v === 'string' || typeof v === 'boolean') out.push([path, String(v)]);
    else if (Array.isArray(v)) {
      if (v.every((e) => typeof e === 'number' || e === null)) {
        out.push([path, v.length > maxArray ? `(${v.length} values)` : `[${v.map((e) => formatNumber(e, 4)).join(', ')}]`]);
      }
      else if (depth < maxDepth) v.forEach((e, i) => walk(e, `${path}[${i}]`, depth + 1));
    } else if (isRecord(v) && depth < maxDepth) {
      for (const [k, e] of Object.entries(v)) walk(e, path ? `${path}.${k}` : k, depth + 1);
    }
  };
  walk(value, '', 0);
  return out;
}

/** A UWB anchor row for the anchors table. */
export interface AnchorRow {
  id: string;
  updates: string;
  nisMean: string;
  outliers: string;
  suspect: boolean;
  reason: string;
}

/** Rows of the UWB anchors table from `report.uwb.anchors` (tolerant: entries without an id are skipped). */
export function anchorRows(report: Pick<Report, 'uwb'>): AnchorRow[] {
  const anchors = isRecord(report.uwb) ? report.uwb.anchors : undefined;
  if (!Array.isArray(anchors)) return [];
  const out: AnchorRow[] = [];
  for (const a of anchors) {
    if (!isRecord(a) || (typeof a.id !== 'string' && typeof a.id !== 'number')) continue;
    const nis = isRecord(a.nis) ? a.nis : {};
    out.push({
      id: String(a.id),
      updates: typeof a.updates === 'number' ? String(a.updates) : '–',
      nisMean: formatNumber(nis.mean),
      outliers: typeof a.outliers === 'number' ? String(a.outliers) : '–',
      suspect: a.suspect === true,
      reason: typeof a.reason === 'string' ? a.reason : '',
    });
  }
  return out;
}

/** Index into `files` of the file a finding names (0, the main log, when it names none or an unknown one). */
export function fileIndexOf(f: Pick<Finding, 'file'>, files: readonly string[]): number {
  if (f.file === undefined) return 0;
  const base = f.file.split(/[\\/]/).pop() ?? f.file;
  const i = files.indexOf(base);
  return i >= 0 ? i : 0;
}

/** Short names of unitless quantities by key prefix, for a y axis (the chart's heading carries the full label). */
const AXIS_NAMES: Record<string, string> = {
  nis: 'NIS',
  nisWindow: 'NIS',
  nisRejected: 'NIS',
  nees: 'NEES',
  neesWindow: 'NEES',
  acf: 'autocorrelation',
};

/**
 * The y-axis label of a time chart: the unit in brackets when there is one; else a short name of the quantity
 * (NIS, NEES, DOP...) from the key; else the series' label (the chart draws it through {@link fitText}). The full
 * label is the chart's heading, so the axis only has to say what the numbers are.
 */
export function yAxisLabel(info: Pick<SeriesInfo, 'key' | 'label' | 'unit'>): string {
  const unit = info.unit.trim();
  if (unit !== '' && unit !== '1') return `[${unit}]`;
  const parts = info.key.split('/');
  const named = AXIS_NAMES[parts[0]];
  if (named) return named;
  if (parts[parts.length - 1] === 'dop') return 'DOP';
  return info.label;
}

/**
 * The name of a chart's series in its legend: the series label without the words that describe the band (from " with "
 * on: "position NEES (3 dof) with the per-epoch 95% band" -> "position NEES (3 dof)"), since the chart's heading above
 * the plot already gives the whole label and the band has legend entries of its own (upper, lower). A label without
 * " with " is kept whole.
 */
export function legendLabel(label: string): string {
  const cut = label.indexOf(' with ');
  return cut > 0 ? label.slice(0, cut) : label;
}

/**
 * `text` as drawn in at most `maxWidth` (the unit `measure` returns): whole when it fits, else the longest prefix
 * (trailing spaces dropped) followed by an ellipsis that fits, else '' (not even the ellipsis fits).
 */
export function fitText(text: string, maxWidth: number, measure: (s: string) => number): string {
  if (measure(text) <= maxWidth) return text;
  const ellipsis = '…';
  if (measure(ellipsis) > maxWidth) return '';
  // The longest prefix whose width with the ellipsis fits (widths grow with the prefix: binary search).
  let lo = 0;
  let hi = text.length - 1;
  while (lo < hi) {
    const mid = Math.ceil((lo + hi) / 2);
    if (measure(text.slice(0, mid).trimEnd() + ellipsis) <= maxWidth) lo = mid;
    else hi = mid - 1;
  }
  return text.slice(0, lo).trimEnd() + ellipsis;
}

/**
 * The name of a layer in a planar chart's key: the series' label up to its first comma, semicolon or parenthesis
 * (labels go on to explain axes and order, which the chart's axes already say); `uwb/anchors` is "UWB anchors".
 */
export function layerName(info: Pick<SeriesInfo, 'key' | 'label'>): string {
  if (info.key === 'uwb/anchors') return 'UWB anchors';
  const cut = info.label.search(/[,;(]/);
  const name = (cut >= 0 ? info.label.slice(0, cut) : info.label).trim();
  return name === '' ? info.key : name;
}

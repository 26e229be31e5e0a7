/**
 * Pure data shaping of the views built from several runs (compare and Monte Carlo): the figure tables grouped by
 * channel and error block, with differences against the first run and the better run; the overlay curves merged
 * onto one x column for the chart; the Monte Carlo summary rows. No DOM, so it is unit-tested in node.
 *
 * Conventions: runs are labelled A, B, C ... in the order of `CompareUpdateMessage.runs` (A is the panel's own log,
 * the reference of the differences); shares (the `inside 95%` figures) are shown in percent, their differences in
 * percentage points; every string that came from a log (channel names) is returned as plain text for textContent.
 */
import type { ComparedFigure, Overlay } from '../extension/core/compare';
import type { CompareAlign, CompareRunInfo, MonteCarloSeriesInfo } from '../extension/protocol';
import { formatNumber, formatPercent } from './shape';

/** One row of a compare table. */
export interface FigureRow {
  /** The figure without its group prefix, e.g. `NIS inside 95%`. */
  what: string;
  unit: string;
  /** Formatted value per run. */
  values: string[];
  /** Formatted difference against run A, per run after A. */
  deltas: string[];
  /** Label of the better run, `tie`, or '' when fewer than two runs have the figure. */
  better: string;
  /** Index of the better run, when one is. */
  best?: number;
  /** How "better" is decided, in words. */
  rule: string;
}

/** The figures of one channel or error block. */
export interface FigureGroup {
  /** Channel name (from the log) or error block. */
  title: string;
  kind: 'channel' | 'errors';
  rows: FigureRow[];
}

/** Error blocks a figure can belong to (core/compare.ts rows). */
const BLOCKS = ['position', 'velocity', 'orientation'];

/** Whether a figure is a share in 0..1 (shown in percent). */
export function isShare(f: Pick<ComparedFigure, 'what' | 'rule' | 'target'>): boolean {
  return f.rule === 'closer' && f.target === 0.95 && /inside 95%/.test(f.what);
}

/** A figure's value as text (percent for shares, the unit otherwise). */
export function formatFigure(f: Pick<ComparedFigure, 'what' | 'rule' | 'target' | 'unit'>, v: number | null): string {
  if (v === null || !Number.isFinite(v)) return '–';
  if (isShare(f)) return formatPercent(v);
  const unit = f.unit ? ` ${f.unit}` : '';
  return `${formatNumber(v, 4)}${unit}`;
}

/** A difference as text with its sign (percentage points for shares). */
export function formatDelta(f: Pick<ComparedFigure, 'what' | 'rule' | 'target' | 'unit'>, d: number | null): string {
  if (d === null || !Number.isFinite(d)) return '–';
  const sign = d > 0 ? '+' : d < 0 ? '−' : '±';
  const a = Math.abs(d);
  if (isShare(f)) return `${sign}${(a * 100).toFixed(1)} pp`;
  const unit = f.unit ? ` ${f.unit}` : '';
  return `${sign}${formatNumber(a, 3)}${unit}`;
}

/** The rule of a figure in words. */
export function ruleText(f: Pick<ComparedFigure, 'what' | 'rule' | 'target'>): string {
  if (f.rule === 'lower') return 'lower is better';
  if (isShare(f)) return 'closer to 95% is better';
  return `closer to ${formatNumber(f.target, 3)} is better`;
}

/**
 * The compared figures grouped by channel (`<channel>: ...`) and error block (`position ...`), in their order.
 * `labels` are the runs' labels (A, B ...).
 */
export function figureGroups(figures: readonly ComparedFigure[], labels: readonly string[]): FigureGroup[] {
  const groups: FigureGroup[] = [];
  const groupOf = (title: string, kind: FigureGroup['kind']): FigureGroup => {
    let g = groups.find((x) => x.title === title && x.kind === kind);
    if (!g) {
      g = { title, kind, rows: [] };
      groups.push(g);
    }
    return g;
  };
  for (const f of figures) {
    const colon = f.what.indexOf(': ');
    const block = BLOCKS.find((b) => f.what.startsWith(`${b} `));
    let g: FigureGroup;
    let what: string;
    if (block !== undefined && colon < 0) {
      g = groupOf(block, 'errors');
      what = f.what.slice(block.length + 1);
    } else if (colon > 0) {
      g = groupOf(f.what.slice(0, colon), 'channel');
      what = f.what.slice(colon + 2);
    } else {
      g = groupOf('other', 'errors');
      what = f.what;
    }
    const present = f.values.filter((v) => v !== null).length;
    g.rows.push({
      what,
      unit: f.unit,
      values: f.values.map((v) => formatFigure(f, v)),
      deltas: f.deltas.slice(1).map((d) => formatDelta(f, d)),
      better: f.best !== undefined ? labels[f.best] ?? '' : present >= 2 ? 'tie' : '',
      ...(f.best !== undefined ? { best: f.best } : {}),
      rule: ruleText(f),
    });
  }
  return groups;
}

/** How many figures each run is better in (index = run). */
export function betterCounts(figures: readonly ComparedFigure[], runs: number): number[] {
  const out = new Array<number>(runs).fill(0);
  for (const f of figures) if (f.best !== undefined && f.best < runs) out[f.best]++;
  return out;
}

/** An alignment in words. */
export function alignText(align: CompareAlign): string {
  return align.by === 'time' ? 'by log time' : align.by === 'start' ? 'by each run’s start' : `by the first ${align.kind} finding`;
}

/** The common span sentence. */
export function spanText(span: { start: number; end: number } | undefined, align: CompareAlign): string {
  if (!span) return '';
  const d = span.end - span.start;
  return `Figures on the common span ${formatNumber(span.start, 6)} s to ${formatNumber(span.end, 6)} s (${formatNumber(d, 4)} s, aligned ${alignText(align)}).`;
}

/** A run's line in the runs table: label, file, hash (first 12 hex digits), offset, own-time window, cropped. */
export function runRow(r: CompareRunInfo): string[] {
  const w = Number.isFinite(r.window[0]) && Number.isFinite(r.window[1]) ? `${formatNumber(r.window[0], 6)} – ${formatNumber(r.window[1], 6)} s` : '–';
  return [r.label, r.name, r.sha256 ? r.sha256.slice(0, 12) : '–', Number.isFinite(r.offset_s) ? `${formatNumber(r.offset_s, 6)} s` : '–', w, r.cropped ? 'yes' : 'no'];
}

/** Overlay curves on one x column (uPlot's aligned data): x ascending, one y column per run, null where a run has no point. */
export interface OverlayColumns {
  x: number[];
  /** Run index of each y column. */
  runs: number[];
  ys: (number | null)[][];
  /** Points given by all runs together. */
  points: number;
}

/** Merge the runs' curves of an overlay onto the union of their x values (exact matches share a row). */
export function overlayColumns(o: Pick<Overlay, 'runs'>): OverlayColumns {
  const xs = new Set<number>();
  let points = 0;
  for (const r of o.runs) {
    for (const x of r.x) if (Number.isFinite(x)) xs.add(x);
    points += r.x.length;
  }
  const x = [...xs].sort((a, b) => a - b);
  const index = new Map<number, number>();
  x.forEach((v, i) => index.set(v, i));
  const ys = o.runs.map((r) => {
    const col = new Array<number | null>(x.length).fill(null);
    r.x.forEach((xv, j) => {
      const i = index.get(xv);
      const yv = r.y[j];
      if (i !== undefined && yv !== null && Number.isFinite(yv)) col[i] = yv;
    });
    return col;
  });
  return { x, runs: o.runs.map((r) => r.run), ys, points };
}

/** Table rows of an overlay (time, one column per run), at most `max` rows evenly picked. */
export function overlayTableRows(c: OverlayColumns, max = 200): { rows: string[][]; total: number } {
  const n = c.x.length;
  const step = Math.max(1, Math.ceil(n / max));
  const rows: string[][] = [];
  for (let i = 0; i < n; i += step) rows.push([formatNumber(c.x[i], 6), ...c.ys.map((col) => formatNumber(col[i], 4))]);
  return { rows, total: n };
}

/** One row of the Monte Carlo summary: quantity, dof, epochs, mean, share inside, bounds for all N runs. */
export function monteCarloRow(s: Pick<MonteCarloSeriesInfo, 'kind' | 'name' | 'dof' | 'epochs' | 'mean' | 'inside95' | 'bounds95'>): string[] {
  return [
    `${s.kind === 'nees' ? 'NEES' : 'NIS'} ${s.name}`,
    String(s.dof),
    String(s.epochs),
    formatNumber(s.mean, 4),
    formatPercent(s.inside95),
    s.bounds95 ? `${formatNumber(s.bounds95[0], 4)} – ${formatNumber(s.bounds95[1], 4)}` : '–',
  ];
}

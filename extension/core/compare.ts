/**
 * Side-by-side comparison of two or more runs: alignment on one time axis, the common span, the figures of each
 * channel and error block with their differences against the first run and which run is better, and the overlay
 * data (each run's curve on the common time axis, min/max-enveloped).
 *
 * Time convention: "common time" c relates to run i's own log time t by t = c + offset_i. `align: time` keeps the
 * logs' own times (offsets 0); `align: start` puts every run's first state epoch at c = 0; `align: event` puts the
 * first finding of a chosen kind (e.g. `bias-step`) of every run at c = 0. The common span is the intersection of
 * the runs' state-time spans on the common axis; figures are meant to be computed on it (each run cropped to
 * [span.start + offset_i, span.end + offset_i], see crop.ts), so runs of different lengths or rates compare fairly.
 *
 * Better-run rules (common practice of filter tuning): the share of NIS/NEES inside the 95% bounds closer to 0.95;
 * the NIS/NEES mean closer to its dof; fewer outliers; lower RMSE; earlier settling.
 */
import type { Report } from './report';
import type { Series } from './series';
import { envelope, isAscending } from './envelope';

/** How runs are put on one time axis. */
export type AlignMode = { by: 'time' } | { by: 'start' } | { by: 'event'; kind: string };

/** Offsets of each run (log time of common time 0), or a plain sentence saying why they cannot be found. */
export type AlignmentResult = { ok: true; offsets_s: number[] } | { ok: false; message: string };

/** A time span on the common axis, seconds. */
export interface Span {
  start: number;
  end: number;
}

/** One compared figure. */
export interface ComparedFigure {
  /** What, e.g. `tdoa: NIS inside 95%`. Channel names come from the log: escape before display. */
  what: string;
  unit: string;
  /** One value per run (null where not computed). */
  values: (number | null)[];
  /** Differences against the first run (null where not computable). */
  deltas: (number | null)[];
  /** Index of the best run; absent when fewer than two runs have the figure or the best ones tie. */
  best?: number;
  /** `lower` is better, or `closer` to `target`. */
  rule: 'lower' | 'closer';
  target?: number;
}

/** One run's curve of an overlay, on the common time axis. */
export interface OverlayRun {
  run: number;
  x: number[];
  y: (number | null)[];
}

/** Curves of the same quantity from several runs, on one time axis. */
export interface Overlay {
  key: string;
  label: string;
  unit: string;
  runs: OverlayRun[];
}

/** Labels of runs in tables: A, B, C, ... Z, A2 ... */
export function runLabel(i: number): string {
  return String.fromCharCode(65 + (i % 26)) + (i >= 26 ? String(Math.floor(i / 26) + 1) : '');
}

/** Offsets (log time of common time 0) of every run for an alignment mode. */
export function alignmentOffsets(reports: Report[], align: AlignMode): AlignmentResult {
  const offsets: number[] = [];
  for (let i = 0; i < reports.length; i++) {
    const r = reports[i];
    if (align.by === 'time') offsets.push(0);
    else if (align.by === 'start') {
      if (r.time.start === undefined) return { ok: false, message: `run ${runLabel(i)} (${r.source.path}) has no state epochs to align by start` };
      offsets.push(r.time.start);
    } else {
      let first: number | undefined;
      for (const f of r.findings) if (f.kind === align.kind && f.t !== undefined && (first === undefined || f.t < first)) first = f.t;
      if (first === undefined) return { ok: false, message: `run ${runLabel(i)} (${r.source.path}) has no '${align.kind}' finding to align by` };
      offsets.push(first);
    }
  }
  return { ok: true, offsets_s: offsets };
}

/** Intersection of the runs' state-time spans on the common axis; undefined when they do not overlap. */
export function commonSpan(reports: Report[], offsets_s: number[]): Span | undefined {
  let start = -Infinity;
  let end = Infinity;
  for (let i = 0; i < reports.length; i++) {
    const t = reports[i].time;
    if (t.start === undefined || t.end === undefined) return undefined;
    start = Math.max(start, t.start - offsets_s[i]);
    end = Math.min(end, t.end - offsets_s[i]);
  }
  return reports.length > 0 && end > start ? { start, end } : undefined;
}

/** Run i's own-time window of a common span. */
export function runWindow(span: Span, offset_s: number): [number, number] {
  return [span.start + offset_s, span.end + offset_s];
}

function pick(r: Report, path: string[]): number | null {
  let cur: unknown = r;
  for (const k of path) {
    if (cur === null || typeof cur !== 'object') return null;
    cur = (cur as Record<string, unknown>)[k];
  }
  return typeof cur === 'number' && Number.isFinite(cur) ? cur : null;
}

interface Row {
  what: string;
  unit: string;
  rule: 'lower' | 'closer';
  target?: number;
  get: (r: Report) => number | null;
}

/** The figures a comparison follows, in display order (channels first, then the error blocks). */
function rows(reports: Report[]): Row[] {
  const out: Row[] = [];
  const names: string[] = [];
  for (const r of reports) for (const c of r.channels) if (!names.includes(c.name)) names.push(c.name);
  for (const name of names) {
    const ch = (r: Report) => r.channels.find((c) => c.name === name);
    const dof = reports.map(ch).find((c) => c !== undefined)?.dof;
    out.push({ what: `${name}: NIS inside 95%`, unit: '', rule: 'closer', target: 0.95, get: (r) => ch(r)?.nis.inside95 ?? null });
    if (dof !== undefined) out.push({ what: `${name}: NIS mean`, unit: '', rule: 'closer', target: dof, get: (r) => ch(r)?.nis.mean ?? null });
    out.push({ what: `${name}: outliers`, unit: '', rule: 'lower', get: (r) => ch(r)?.outliers ?? null });
  }
  out.push({ what: 'position RMSE', unit: 'm', rule: 'lower', get: (r) => pick(r, ['errors', 'position', 'rmse']) });
  out.push({ what: 'position ATE RMSE', unit: 'm', rule: 'lower', get: (r) => pick(r, ['errors', 'position', 'ate', 'rmse']) });
  out.push({ what: 'position NEES inside 95%', unit: '', rule: 'closer', target: 0.95, get: (r) => pick(r, ['errors', 'position', 'nees', 'inside95']) });
  out.push({ what: 'velocity RMSE', unit: 'm/s', rule: 'lower', get: (r) => pick(r, ['errors', 'velocity', 'rmse']) });
  out.push({ what: 'velocity NEES inside 95%', unit: '', rule: 'closer', target: 0.95, get: (r) => pick(r, ['errors', 'velocity', 'nees', 'inside95']) });
  out.push({ what: 'orientation RMSE', unit: 'deg', rule: 'lower', get: (r) => pick(r, ['errors', 'orientation', 'rmseDeg']) });
  out.push({ what: 'orientation NEES inside 95%', unit: '', rule: 'closer', target: 0.95, get: (r) => pick(r, ['errors', 'orientation', 'nees', 'inside95']) });
  for (const block of ['position', 'velocity', 'orientation']) {
    out.push({ what: `${block} settling time`, unit: 's', rule: 'lower', get: (r) => settleTime(r, block) });
  }
  return out;
}

/**
 * Settling time of an error block, seconds from the start of the analysed span (the errors stage's
 * `errors.convergence.<block>.settleTime`; older reports kept it under `errors.<block>.convergence`).
 */
export function settleTime(r: Report, block: string): number | null {
  return pick(r, ['errors', 'convergence', block, 'settleTime']) ?? pick(r, ['errors', block, 'convergence', 'settleTime']);
}

/** Compare reports figure by figure (figures no run has are left out). */
export function compareReports(reports: Report[]): ComparedFigure[] {
  const out: ComparedFigure[] = [];
  for (const row of rows(reports)) {
    const values = reports.map(row.get);
    if (values.every((v) => v === null)) continue;
    const first = values[0];
    const deltas = values.map((v) => (v === null || first === null ? null : v - first));
    const score = (v: number): number => (row.rule === 'lower' ? v : Math.abs(v - (row.target ?? 0)));
    let best: number | undefined;
    let bestScore = Infinity;
    let tie = false;
    let present = 0;
    values.forEach((v, i) => {
      if (v === null) return;
      present++;
      const s = score(v);
      const eps = 1e-12 * Math.max(1, Math.abs(s));
      if (s < bestScore - eps) {
        bestScore = s;
        best = i;
        tie = false;
      } else if (Math.abs(s - bestScore) <= eps) tie = true;
    });
    out.push({
      what: row.what,
      unit: row.unit,
      values,
      deltas,
      rule: row.rule,
      ...(row.target !== undefined ? { target: row.target } : {}),
      ...(present >= 2 && !tie && best !== undefined ? { best } : {}),
    });
  }
  return out;
}

/** How many figures each run is best in (index = run). */
export function winCounts(figures: ComparedFigure[], runs: number): number[] {
  const wins = new Array<number>(runs).fill(0);
  for (const f of figures) if (f.best !== undefined) wins[f.best]++;
  return wins;
}

/** Magnitude of three aligned component series (x of the first), or undefined when they do not line up. */
function magnitude(parts: (Series | undefined)[], key: string, label: string): Series | undefined {
  const [a, b, c] = parts;
  if (!a || !b || !c) return undefined;
  const n = a.x.length;
  if (b.x.length !== n || c.x.length !== n) return undefined;
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) y[i] = Math.hypot(a.y[i], b.y[i], c.y[i]);
  return { key, group: a.group, label, unit: a.unit, x: a.x, y };
}

/**
 * The time series compared across runs: each channel's windowed NIS, and the magnitude of the position, velocity
 * and orientation errors (from the three component series).
 */
export function overlaySources(series: Series[]): Series[] {
  const byKey = new Map(series.map((s) => [s.key, s]));
  const out: Series[] = [];
  for (const s of series) if (s.key.startsWith('nisWindow/')) out.push(s);
  for (const [block, what] of [['position', 'position error magnitude'], ['velocity', 'velocity error magnitude'], ['orientation', 'orientation error magnitude']]) {
    const m = magnitude(['x', 'y', 'z'].map((a) => byKey.get(`error/${block}/${a}`)), `error/${block}/norm`, what);
    if (m) out.push(m);
  }
  return out;
}

/**
 * Overlay data: for every quantity of `overlaySources` present in at least one run, each run's curve shifted to the
 * common axis (x - offset_i), restricted to the common span and reduced to a min/max envelope of `buckets` buckets.
 * Non-finite values become null.
 */
export function overlays(seriesPerRun: Series[][], offsets_s: number[], span: Span, buckets = 600): Overlay[] {
  const keys: { key: string; label: string; unit: string }[] = [];
  const sources = seriesPerRun.map(overlaySources);
  for (const list of sources) for (const s of list) if (!keys.some((k) => k.key === s.key)) keys.push({ key: s.key, label: s.label, unit: s.unit });
  const out: Overlay[] = [];
  for (const k of keys) {
    const runs: OverlayRun[] = [];
    sources.forEach((list, i) => {
      const s = list.find((x) => x.key === k.key);
      if (!s || !isAscending(s.x)) return;
      const o = offsets_s[i];
      const env = envelope(s, span.start + o, span.end + o, buckets);
      const x: number[] = [];
      const y: (number | null)[] = [];
      for (let j = 0; j < env.x.length; j++) {
        const c = env.x[j] - o;
        if (c < span.start - 1e-9 || c > span.end + 1e-9) continue;
        x.push(c);
        y.push(Number.isFinite(env.y[j]) ? env.y[j] : null);
      }
      runs.push({ run: i, x, y });
    });
    if (runs.length > 0) out.push({ ...k, label: k.label.replace(/ with .*$/, ''), runs });
  }
  return out;
}

/**
 * The CI gate: thresholds on a report (from the command line or a gate file such as `residuum.gate.json`) and a
 * comparison with a stored baseline report. Pure: the CLI reads the files and prints the verdicts.
 *
 * Gate file (schema/gate.schema.json):
 *   { "minInside95": 0.9, "maxOutliers": 50, "maxRmse_m": 0.5, "maxVelocityRmse_mps": 0.2, "maxOrientationRmseDeg": 2,
 *     "maxSettleTime_s": 20, "channels": { "tdoa": { "minInside95": 0.9, "maxOutliers": 10 } } }
 * `minInside95` is the least share of NIS inside the 95% bounds per channel; `maxRmse_m` the position RMSE.
 */
import type { Report, ChannelReport } from './report';
import { settleTime } from './compare';

/** Thresholds of one channel. */
export interface ChannelGate {
  minInside95?: number;
  maxOutliers?: number;
}

/** All thresholds. */
export interface Gate extends ChannelGate {
  maxRmse_m?: number;
  maxVelocityRmse_mps?: number;
  maxOrientationRmseDeg?: number;
  maxSettleTime_s?: number;
  channels?: Record<string, ChannelGate>;
}

/** One verdict line. */
export interface GateResult {
  /** What was checked, e.g. `tdoa: NIS inside 95%`. */
  what: string;
  actual?: number;
  limit: number;
  pass: boolean;
  /** Plain sentence for the summary. */
  message: string;
}

/** True when the gate holds at least one threshold. */
export function hasThresholds(g: Gate): boolean {
  return (
    g.minInside95 !== undefined ||
    g.maxOutliers !== undefined ||
    g.maxRmse_m !== undefined ||
    g.maxVelocityRmse_mps !== undefined ||
    g.maxOrientationRmseDeg !== undefined ||
    g.maxSettleTime_s !== undefined ||
    Object.values(g.channels ?? {}).some((c) => c.minInside95 !== undefined || c.maxOutliers !== undefined)
  );
}

function atLeast(what: string, actual: number | undefined, limit: number, unit = ''): GateResult {
  const pass = actual !== undefined && actual >= limit;
  return { what, actual, limit, pass, message: `${what}: ${actual === undefined ? 'not computed' : fmt(actual) + unit} (needs >= ${fmt(limit)}${unit})` };
}

function atMost(what: string, actual: number | undefined, limit: number, unit = ''): GateResult {
  const pass = actual !== undefined && actual <= limit;
  return { what, actual, limit, pass, message: `${what}: ${actual === undefined ? 'not computed' : fmt(actual) + unit} (needs <= ${fmt(limit)}${unit})` };
}

function fmt(v: number): string {
  return Number.isInteger(v) ? String(v) : v.toPrecision(4);
}

function num(obj: unknown, ...keys: string[]): number | undefined {
  let cur: unknown = obj;
  for (const k of keys) {
    if (cur === null || typeof cur !== 'object') return undefined;
    cur = (cur as Record<string, unknown>)[k];
  }
  return typeof cur === 'number' && Number.isFinite(cur) ? cur : undefined;
}

/**
 * Largest settling time over the error blocks and over every segment of the run (a filter restart starts a new
 * segment that must settle again; `errors.segments`), seconds, when computed.
 */
export function worstSettleTime(r: Report): number | undefined {
  let worst: number | undefined;
  const segments = (r.errors as { segments?: unknown } | undefined)?.segments;
  for (const block of ['position', 'velocity', 'orientation']) {
    const values = [settleTime(r, block) ?? undefined];
    if (Array.isArray(segments)) for (const seg of segments) values.push(num(seg, block, 'convergence', 'settleTime'));
    for (const v of values) if (v !== undefined) worst = worst === undefined ? v : Math.max(worst, v);
  }
  return worst;
}

/** Evaluate every threshold of a gate on a report. */
export function evaluateGate(r: Report, g: Gate): GateResult[] {
  const out: GateResult[] = [];
  const totalOutliers = r.channels.reduce((s, c) => s + c.outliers, 0);
  for (const c of r.channels) {
    const own = g.channels?.[c.name] ?? {};
    const minInside = own.minInside95 ?? g.minInside95;
    if (minInside !== undefined) out.push(atLeast(`${c.name}: NIS inside 95% bounds`, c.nis.inside95, minInside));
    if (own.maxOutliers !== undefined) out.push(atMost(`${c.name}: outliers`, c.outliers, own.maxOutliers));
  }
  for (const name of Object.keys(g.channels ?? {})) {
    if (!r.channels.some((c) => c.name === name)) {
      out.push({ what: `${name}: channel`, limit: 0, pass: false, message: `${name}: the gate names this channel but the log has no such channel` });
    }
  }
  if (g.maxOutliers !== undefined) out.push(atMost('all channels: outliers', totalOutliers, g.maxOutliers));
  if (g.maxRmse_m !== undefined) out.push(atMost('position RMSE', num(r.errors, 'position', 'rmse'), g.maxRmse_m, ' m'));
  if (g.maxVelocityRmse_mps !== undefined) out.push(atMost('velocity RMSE', num(r.errors, 'velocity', 'rmse'), g.maxVelocityRmse_mps, ' m/s'));
  if (g.maxOrientationRmseDeg !== undefined) out.push(atMost('orientation RMSE', num(r.errors, 'orientation', 'rmseDeg'), g.maxOrientationRmseDeg, ' deg'));
  if (g.maxSettleTime_s !== undefined) out.push(atMost('settling time', worstSettleTime(r), g.maxSettleTime_s, ' s'));
  return out;
}

/** A figure of a report that a baseline comparison follows, and which direction is better. */
interface Figure {
  what: string;
  value: number | undefined;
  /** 'lower' better, or 'closer' to a target (NIS inside 95% is best at 0.95). */
  better: 'lower' | 'closer';
  target?: number;
}

function figures(r: Report): Figure[] {
  const out: Figure[] = [];
  for (const c of r.channels as ChannelReport[]) {
    out.push({ what: `${c.name}: NIS inside 95% bounds`, value: c.nis.inside95, better: 'closer', target: 0.95 });
    out.push({ what: `${c.name}: outliers`, value: c.outliers, better: 'lower' });
  }
  out.push({ what: 'position RMSE', value: num(r.errors, 'position', 'rmse'), better: 'lower' });
  out.push({ what: 'velocity RMSE', value: num(r.errors, 'velocity', 'rmse'), better: 'lower' });
  out.push({ what: 'orientation RMSE', value: num(r.errors, 'orientation', 'rmseDeg'), better: 'lower' });
  out.push({ what: 'settling time', value: worstSettleTime(r), better: 'lower' });
  return out;
}

/**
 * Compare a report with a stored baseline: a figure fails when it is worse than the baseline's by more than
 * `tolerancePercent` percent (for 'closer' figures: its distance to the target grew by more than that share,
 * with 0.5 percentage points of slack so a perfect baseline does not make every change fail).
 */
export function compareWithBaseline(r: Report, baseline: Report, tolerancePercent: number): GateResult[] {
  const base = new Map(figures(baseline).map((f) => [f.what, f]));
  const out: GateResult[] = [];
  const tol = tolerancePercent / 100;
  for (const f of figures(r)) {
    const b = base.get(f.what);
    base.delete(f.what);
    if (!b || b.value === undefined) continue;
    if (f.value === undefined) {
      out.push({ what: `${f.what} vs baseline`, limit: b.value, pass: false, message: `${f.what}: not computed now, baseline had ${fmt(b.value)}` });
      continue;
    }
    if (f.better === 'lower') {
      const limit = b.value * (1 + tol);
      out.push({
        what: `${f.what} vs baseline`,
        actual: f.value,
        limit,
        pass: f.value <= limit + 1e-12,
        message: `${f.what}: ${fmt(f.value)} vs baseline ${fmt(b.value)} (may be at most ${tolerancePercent}% worse: <= ${fmt(limit)})`,
      });
    } else {
      const target = f.target ?? 0;
      const dNow = Math.abs(f.value - target);
      const dBase = Math.abs(b.value - target);
      const limit = dBase * (1 + tol) + 0.005;
      out.push({
        what: `${f.what} vs baseline`,
        actual: dNow,
        limit,
        pass: dNow <= limit,
        message: `${f.what}: ${fmt(f.value)} vs baseline ${fmt(b.value)} (distance to ${target} may grow at most ${tolerancePercent}% + 0.005: ${fmt(dNow)} <= ${fmt(limit)})`,
      });
    }
  }
  for (const b of base.values()) {
    if (b.value === undefined) continue;
    out.push({ what: `${b.what} vs baseline`, limit: b.value, pass: false, message: `${b.what}: in the baseline (${fmt(b.value)}) but not in this run` });
  }
  return out;
}

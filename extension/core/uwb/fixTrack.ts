/**
 * The measurement-only track: raw TDOA and range records grouped into epochs and solved one epoch at a time with
 * {@link tdoaFix} / {@link rangeFix}, independent of the estimator (only the root choice of a 4-anchor TDOA epoch
 * and the fallback start use a prior: the previous fix when recent, else the estimate).
 *
 * Epochs: records sorted by time; an epoch opens at a record and takes every record within half the typical
 * update period of one link (the median over links of their median interval) after it; a link seen twice in an
 * epoch keeps its last value. TDOA and range records form separate epochs.
 *
 * Consistency passes (common practice for redundant fixes): with the typical residual RMS taken as the median over
 * all fixes, an epoch whose RMS exceeds 3 times it (and {@link OUTLIER_FLOOR_M}) and that has at least 5
 * measurements is solved again leaving out each measurement in turn; the best of these replaces it when its RMS is
 * back under that limit (one gross error, which in a least-squares fit spreads over the other residuals and hides).
 * A fix whose RMS still exceeds {@link OUTLIER_FACTOR} times the typical one is not kept (several gross errors, or
 * a wrong local minimum); such fixes are counted in `rejected`.
 */
import type { LinkTable, RawColumns } from './collect';
import { rangeFix, type RangeObservation } from './rangeFix';
import { median } from './residuals';
import { tdoaFix, type TdoaObservation } from './tdoaFix';
import type { Vec3_m } from './vec3';

/** Fixes over time (columns aligned, ascending time). */
export interface FixTrack {
  length: number;
  t_s: Float64Array;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  /** RMS of the fix's own measurement residuals, metres. */
  rms_m: Float64Array;
  /** Epochs formed (fixes attempted). */
  epochs: number;
  /** Epochs solved again without one gross error (leave-one-out). */
  refitted: number;
  /** Converged fixes left out for a residual RMS far above the others'. */
  rejected: number;
}

/** A fix whose residual RMS exceeds this many times the typical one is not kept. */
export const OUTLIER_FACTOR = 5;
/** RMS below this never counts as inconsistent, metres (keeps noise-free epochs untouched). */
export const OUTLIER_FLOOR_M = 0.05;

/** A previous fix older than this is not used as the prior, seconds. */
const PRIOR_MAX_AGE_S = 2;

/** Typical interval between records of one link: median over links of the median step. */
export function typicalLinkPeriod_s(t_s: Float64Array, perLink: readonly ArrayLike<number>[]): number {
  const periods: number[] = [];
  for (const list of perLink) {
    if (list.length < 3) continue;
    const steps: number[] = [];
    for (let k = 1; k < list.length; k++) {
      const d = t_s[list[k]] - t_s[list[k - 1]];
      if (d > 0) steps.push(d);
    }
    if (steps.length > 0) periods.push(median(steps));
  }
  return periods.length > 0 ? median(periods) : NaN;
}

/** One solved epoch (before the consistency passes). */
interface Solved {
  t: number;
  p: Vec3_m;
  rms: number;
  tdoa?: TdoaObservation[];
  range?: RangeObservation[];
}

/**
 * Solve every epoch of raw records. `perLink` lists the raw record indices per link (ascending time);
 * `estimateAt` gives the estimate at a time (undefined where unknown).
 */
export function fixTrack(
  raw: RawColumns,
  links: LinkTable,
  positions: readonly (Vec3_m | undefined)[],
  perLink: readonly ArrayLike<number>[],
  estimateAt: (t_s: number) => Vec3_m | undefined,
): FixTrack {
  const period = typicalLinkPeriod_s(raw.t_s, perLink);
  const span = Number.isFinite(period) ? 0.5 * period : 0.05;
  const solved: Solved[] = [];
  let epochs = 0;
  for (const kind of [0, 1]) {
    const idx: number[] = [];
    for (let k = 0; k < raw.length; k++) if (raw.kind[k] === kind && Number.isFinite(raw.value_m[k])) idx.push(k);
    idx.sort((p, q) => raw.t_s[p] - raw.t_s[q] || p - q);
    let last: { t: number; p: Vec3_m } | undefined;
    for (let s = 0; s < idx.length; ) {
      const tStart = raw.t_s[idx[s]];
      let e = s;
      const latest = new Map<number, number>();
      let tSum = 0;
      while (e < idx.length && raw.t_s[idx[e]] - tStart <= span) {
        latest.set(raw.link[idx[e]], idx[e]);
        tSum += raw.t_s[idx[e]];
        e++;
      }
      const tEpoch = tSum / (e - s);
      s = e;
      const prior = last && tEpoch - last.t <= PRIOR_MAX_AGE_S ? last.p : estimateAt(tEpoch);
      let entry: Solved | undefined;
      if (kind === 0) {
        const obs: TdoaObservation[] = [];
        for (const [L, k] of latest) obs.push({ i: links.a[L], j: links.b[L], d_m: raw.value_m[k] });
        if (countAnchors(obs) < 4) continue;
        epochs++;
        const fix = tdoaFix(positions, obs, prior);
        if (fix) entry = { t: tEpoch, p: fix.p, rms: fix.rms_m, tdoa: obs };
      } else {
        const obs: RangeObservation[] = [];
        for (const [L, k] of latest) obs.push({ anchor: links.a[L], r_m: raw.value_m[k] });
        if (obs.length < 4) continue;
        epochs++;
        const fix = rangeFix(positions, obs, prior);
        if (fix) entry = { t: tEpoch, p: fix.p, rms: fix.rms_m, range: obs };
      }
      if (!entry) continue;
      last = { t: entry.t, p: entry.p };
      solved.push(entry);
    }
  }

  // Second pass: an epoch whose residual RMS is well above the typical one, and which becomes typical when one
  // measurement is left out, is solved without it (leave-one-out keeps one gross error from hiding by spreading
  // over the other residuals).
  const typical = median(solved.map((x) => x.rms));
  const suspectLimit = Math.max(OUTLIER_FLOOR_M, 3 * typical);
  let refitted = 0;
  for (const x of solved) {
    if (!(x.rms > suspectLimit)) continue;
    let best: { p: Vec3_m; rms: number; tdoa?: TdoaObservation[]; range?: RangeObservation[] } | undefined;
    const m = x.tdoa?.length ?? x.range?.length ?? 0;
    if (m < 5) continue;
    for (let drop = 0; drop < m; drop++) {
      if (x.tdoa) {
        const rest = x.tdoa.filter((_, k) => k !== drop);
        if (countAnchors(rest) < 4) continue;
        const fix = tdoaFix(positions, rest, x.p);
        if (fix && (!best || fix.rms_m < best.rms)) best = { p: fix.p, rms: fix.rms_m, tdoa: rest };
      } else if (x.range) {
        const rest = x.range.filter((_, k) => k !== drop);
        const fix = rangeFix(positions, rest, x.p);
        if (fix && (!best || fix.rms_m < best.rms)) best = { p: fix.p, rms: fix.rms_m, range: rest };
      }
    }
    if (best && best.rms <= suspectLimit) {
      x.p = best.p;
      x.rms = best.rms;
      refitted++;
    }
  }
  const rmsLimit = Math.max(OUTLIER_FLOOR_M, OUTLIER_FACTOR * typical);
  const kept = solved.filter((x) => !(x.rms > rmsLimit)).sort((a, b) => a.t - b.t);
  const col = (f: (x: Solved) => number): Float64Array => Float64Array.from(kept, f);
  return {
    length: kept.length,
    t_s: col((x) => x.t),
    x: col((x) => x.p[0]),
    y: col((x) => x.p[1]),
    z: col((x) => x.p[2]),
    rms_m: col((x) => x.rms),
    epochs,
    refitted,
    rejected: solved.length - kept.length,
  };
}

function countAnchors(obs: readonly TdoaObservation[]): number {
  const s = new Set<number>();
  for (const o of obs) {
    s.add(o.i);
    s.add(o.j);
  }
  return s.size;
}


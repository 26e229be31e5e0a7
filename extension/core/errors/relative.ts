/**
 * Relative (drift) error over time and distance windows.
 *
 * For an epoch pair (i, j) the relative error is |Δ_est - Δ_ref| with Δ = p_j - p_i; when both trajectories carry
 * attitude each displacement is first expressed in its own body frame at i (Δ = R_i^T (p_j - p_i)), which is the
 * translation norm of (ref_i^-1 ref_j)^-1 (est_i^-1 est_j) on SE(3). Pairs: for a time window Δt, j is the first
 * epoch at or after t_i + Δt (kept when within max(Δt/10, median step) of it); for a distance window D, j is the
 * first epoch where the reference path length from i reaches D. Figures: RMSE, median and max over the pairs.
 */
import { rotationAt, type AttitudeColumns } from './attitude';
import { medianInPlace } from '../stats/median';
import { radixMedian } from '../stats/radixMedian';
import { giveBack, takeFloat64 } from '../scratch';

/** Statistics of one relative-error window. */
export interface RelativeErrorStats {
  /** Pairs used. */
  count: number;
  rmse?: number;
  median?: number;
  max?: number;
}

/** Median of a list of finite numbers (a copy is partially reordered); NaN when empty. */
export function median(values: ArrayLike<number>): number {
  return medianInPlace(Float64Array.from(values));
}

/** Figures of the first `count` pair errors (the median by a radix histogram: the pairs are as many as the epochs). */
function stats(errs: Float64Array, count: number): RelativeErrorStats {
  if (count === 0) return { count: 0 };
  let s = 0, mx = 0;
  for (let i = 0; i < count; i++) { const e = errs[i]; s += e * e; if (e > mx) mx = e; }
  return { count, rmse: Math.sqrt(s / count), max: mx, median: radixMedian(errs, count) };
}

/** Inputs shared by both windows: epochs `use` (ascending) with positions and optional attitudes (row-major 3x3). */
export interface RelativeInput {
  t_s: Float64Array;
  /** Epoch indices to use, ascending in time. */
  use: ArrayLike<number>;
  /** Estimate and reference positions, component columns (2 or 3). */
  est: Float64Array[];
  ref: Float64Array[];
  /** Optional attitudes on the epochs (attitude.ts), both or neither. */
  estAtt?: AttitudeColumns;
  refAtt?: AttitudeColumns;
  /** Scratch for the pair errors, at least `use.length` long (made when absent). */
  scratch?: Float64Array;
}

const de = new Float64Array(3), dr = new Float64Array(3), le = new Float64Array(3), lr = new Float64Array(3);
const Ra = new Float64Array(9), Rb = new Float64Array(9);

function pairError(inp: RelativeInput, i: number, j: number): number {
  // each displacement in its own body frame at i, where both attitudes are known there
  const rotated = !!inp.estAtt && !!inp.refAtt && inp.est.length === 3 && rotationAt(Ra, inp.estAtt, i) && rotationAt(Rb, inp.refAtt, i);
  return pairErrorWith(inp, i, j, rotated);
}

/** The pair error with the attitudes at i already in Ra, Rb (`rotated`), or without attitudes. */
function pairErrorWith(inp: RelativeInput, i: number, j: number, rotated: boolean): number {
  const d = inp.est.length;
  if (d === 3) return pairError3(inp.est, inp.ref, i, j, rotated);
  de.fill(0); dr.fill(0);
  for (let c = 0; c < d; c++) { de[c] = inp.est[c][j] - inp.est[c][i]; dr[c] = inp.ref[c][j] - inp.ref[c][i]; }
  if (rotated) {
    const a = Ra, b = Rb;
    for (let r = 0; r < 3; r++) {
      le[r] = a[r] * de[0] + a[3 + r] * de[1] + a[6 + r] * de[2];
      lr[r] = b[r] * dr[0] + b[3 + r] * dr[1] + b[6 + r] * dr[2];
    }
    if (Number.isFinite(le[0] + le[1] + le[2] + lr[0] + lr[1] + lr[2])) return norm3(le[0] - lr[0], le[1] - lr[1], le[2] - lr[2]);
  }
  return norm3(de[0] - dr[0], de[1] - dr[1], de[2] - dr[2]);
}

/**
 * {@link pairErrorWith} of 3-D positions on locals instead of scratch vectors (it was the largest cost of the relative
 * error on a long log): the same products and sums in the same order.
 */
function pairError3(est: Float64Array[], ref: Float64Array[], i: number, j: number, rotated: boolean): number {
  const e0 = est[0], e1 = est[1], e2 = est[2], f0 = ref[0], f1 = ref[1], f2 = ref[2];
  const de0 = e0[j] - e0[i], de1 = e1[j] - e1[i], de2 = e2[j] - e2[i];
  const dr0 = f0[j] - f0[i], dr1 = f1[j] - f1[i], dr2 = f2[j] - f2[i];
  if (rotated) {
    const a = Ra, b = Rb;
    const le0 = a[0] * de0 + a[3] * de1 + a[6] * de2, lr0 = b[0] * dr0 + b[3] * dr1 + b[6] * dr2;
    const le1 = a[1] * de0 + a[4] * de1 + a[7] * de2, lr1 = b[1] * dr0 + b[4] * dr1 + b[7] * dr2;
    const le2 = a[2] * de0 + a[5] * de1 + a[8] * de2, lr2 = b[2] * dr0 + b[5] * dr1 + b[8] * dr2;
    if (Number.isFinite(le0 + le1 + le2 + lr0 + lr1 + lr2)) return norm3(le0 - lr0, le1 - lr1, le2 - lr2);
  }
  return norm3(de0 - dr0, de1 - dr1, de2 - dr2);
}

/** |a| of a 3-vector as a plain square root (see attitude.ts on the fast norm). */
function norm3(x: number, y: number, z: number): number {
  return Math.sqrt(x * x + y * y + z * z);
}

/** Relative error over time windows of `window_s` seconds. */
export function relativeErrorOverTime(inp: RelativeInput, window_s: number, medianStep_s: number): RelativeErrorStats {
  const { t_s, use } = inp;
  const tol = Math.max(window_s / 10, Number.isFinite(medianStep_s) ? medianStep_s : 0);
  const errs = scratchFor(inp);
  let count = 0;
  let q = 0;
  for (let p = 0; p < use.length; p++) {
    const target = t_s[use[p]] + window_s;
    if (q < p) q = p;
    while (q < use.length && t_s[use[q]] < target) q++;
    if (q >= use.length) break;
    if (t_s[use[q]] - target > tol) continue;
    const e = pairError(inp, use[p], use[q]);
    if (Number.isFinite(e)) errs[count++] = e;
  }
  return stats(errs, count);
}

/** Relative error over reference path lengths of `distance_m` metres. */
export function relativeErrorOverDistance(inp: RelativeInput, distance_m: number): RelativeErrorStats {
  const { use, ref } = inp;
  const s = new Float64Array(use.length);
  for (let p = 1; p < use.length; p++) {
    let d2 = 0;
    for (const c of ref) { const d = c[use[p]] - c[use[p - 1]]; d2 += d * d; }
    s[p] = s[p - 1] + Math.sqrt(d2);
  }
  const errs = scratchFor(inp);
  let count = 0;
  let q = 0;
  for (let p = 0; p < use.length; p++) {
    const target = s[p] + distance_m;
    if (q < p) q = p;
    while (q < use.length && s[q] < target) q++;
    if (q >= use.length) break;
    const e = pairError(inp, use[p], use[q]);
    if (Number.isFinite(e)) errs[count++] = e;
  }
  return stats(errs, count);
}

function scratchFor(inp: RelativeInput): Float64Array {
  return inp.scratch && inp.scratch.length >= inp.use.length ? inp.scratch : new Float64Array(inp.use.length);
}

/** Both relative errors of one run and the reference path length they share. */
export interface RelativeErrors {
  time: RelativeErrorStats;
  /** Absent when the distance window is not positive. */
  distance?: RelativeErrorStats;
  distance_m: number;
  pathLength_m: number;
}

/**
 * {@link relativeErrorOverTime} and {@link relativeErrorOverDistance} in one pass over the epochs: the attitudes at
 * each start epoch are computed once for both pairs, and the path length comes from the same cumulative distances.
 * Same figures as the two functions.
 * @param distanceFor the distance window for the reference path length (e.g. {@link defaultDistanceWindow})
 */
export function relativeErrors(inp: RelativeInput, window_s: number, medianStep_s: number, distanceFor: (pathLength_m: number) => number): RelativeErrors {
  const n = inp.use.length;
  const s = takeFloat64(n);
  cumulativePath(inp.ref, inp.use, s);
  const pathLength_m = n > 0 ? s[n - 1] : 0;
  const D = distanceFor(pathLength_m);
  const withDistance = D > 0;
  const tol = Math.max(window_s / 10, Number.isFinite(medianStep_s) ? medianStep_s : 0);
  const errsT = scratchFor(inp);
  const errsD = withDistance ? takeFloat64(n) : errsT;
  const counts = new Float64Array(2);
  pairErrors(inp, s, window_s, tol, D, errsT, errsD, counts);
  const countT = counts[0], countD = counts[1];
  const out = {
    time: stats(errsT, countT), ...(withDistance ? { distance: stats(errsD, countD) } : {}), distance_m: D, pathLength_m,
  };
  giveBack(s, withDistance ? errsD : undefined);
  return out;
}

// One loop per function below: the stage runs once per process, and V8 compiles a long loop well only when it is
// alone in its function (see track.ts).

/** Reference path length from the first used epoch to each used epoch, into s. */
function cumulativePath(ref: Float64Array[], use: ArrayLike<number>, s: Float64Array): void {
  const n = use.length;
  if (n > 0) s[0] = 0;
  if (ref.length === 3) {
    // 0 + x = x for the first (non-negative) square: the general loop's sum
    const [c0, c1, c2] = ref;
    for (let p = 1; p < n; p++) {
      const i = use[p], h = use[p - 1];
      const d0 = c0[i] - c0[h], d1 = c1[i] - c1[h], d2 = c2[i] - c2[h];
      s[p] = s[p - 1] + Math.sqrt(d0 * d0 + d1 * d1 + d2 * d2);
    }
    return;
  }
  for (let p = 1; p < n; p++) {
    let d2 = 0;
    for (const c of ref) { const d = c[use[p]] - c[use[p - 1]]; d2 += d * d; }
    s[p] = s[p - 1] + Math.sqrt(d2);
  }
}

/**
 * The pairs of both windows in one pass over the start epochs (the attitudes at each start computed once for both):
 * time-window errors into errsT, distance-window errors (D > 0) into errsD, their counts into counts[0], counts[1].
 */
function pairErrors(inp: RelativeInput, s: Float64Array, window_s: number, tol: number, D: number, errsT: Float64Array,
  errsD: Float64Array, counts: Float64Array): void {
  const { t_s, use } = inp;
  const n = use.length;
  let countT = 0, countD = 0;
  let qT = 0, qD = 0;
  let timeDone = false, distanceDone = !(D > 0);
  const hasAtt = !!inp.estAtt && !!inp.refAtt && inp.est.length === 3;
  for (let p = 0; p < n && !(timeDone && distanceDone); p++) {
    const i = use[p];
    let jT = -1, jD = -1;
    if (!timeDone) {
      const target = t_s[i] + window_s;
      if (qT < p) qT = p;
      while (qT < n && t_s[use[qT]] < target) qT++;
      if (qT >= n) timeDone = true;
      else if (!(t_s[use[qT]] - target > tol)) jT = use[qT];
    }
    if (!distanceDone) {
      const target = s[p] + D;
      if (qD < p) qD = p;
      while (qD < n && s[qD] < target) qD++;
      if (qD >= n) distanceDone = true;
      else jD = use[qD];
    }
    if (jT < 0 && jD < 0) continue;
    // the relative error is a figure over many pairs: the fast norm (attitude.ts) does not change it
    const rotated = hasAtt && rotationAt(Ra, inp.estAtt as AttitudeColumns, i, 'fast') && rotationAt(Rb, inp.refAtt as AttitudeColumns, i, 'fast');
    if (jT >= 0) { const e = pairErrorWith(inp, i, jT, rotated); if (Number.isFinite(e)) errsT[countT++] = e; }
    if (jD >= 0) { const e = pairErrorWith(inp, i, jD, rotated); if (Number.isFinite(e)) errsD[countD++] = e; }
  }
  counts[0] = countT; counts[1] = countD;
}

/** Reference path length over the used epochs, metres. */
export function pathLength(ref: Float64Array[], use: ArrayLike<number>): number {
  let s = 0;
  for (let p = 1; p < use.length; p++) {
    let d2 = 0;
    for (const c of ref) { const d = c[use[p]] - c[use[p - 1]]; d2 += d * d; }
    s += Math.sqrt(d2);
  }
  return s;
}

/** A round distance (1, 2 or 5 times a power of ten) at or below a tenth of the path length; NaN for no path. */
export function defaultDistanceWindow(pathLength_m: number): number {
  const target = pathLength_m / 10;
  if (!(target > 0)) return NaN;
  const p = Math.pow(10, Math.floor(Math.log10(target)));
  for (const m of [5, 2, 1]) if (m * p <= target) return m * p;
  return p;
}

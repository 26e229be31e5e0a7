/**
 * Residual statistics and the residuals of UWB measurements against a known position.
 *
 * - A residual is measured minus predicted: for a range r - |p - s_a|, for a TDOA pair (i, j) d - (|p - s_j| - |p - s_i|),
 *   with p the ground-truth position (or the estimate, for the estimate-based residual). A survey error or a clock
 *   offset of one anchor therefore shows as a (near) constant offset on every link that involves it.
 * - Spread: sample standard deviation (n - 1) and the robust pair median / MAD (median absolute deviation from the
 *   median, unscaled); 1.4826 MAD estimates sigma for Gaussian data (common practice).
 * - Uncertainty of a mean under serial correlation: the effective sample size n (1 - rho1) / (1 + rho1) of an AR(1)
 *   process with lag-1 autocorrelation rho1 (clamped to [0, 0.99]; common practice), so 10 Hz residuals that
 *   wander slowly do not make a small offset look significant.
 */
import { norm3, type Vec3_m } from './vec3';
import { radixMedian } from '../stats/radixMedian';
import { medianInPlace } from '../stats/median';

/** Scale from MAD to a Gaussian sigma, 1 / Phi^-1(3/4) (common practice). */
export const MAD_TO_SIGMA = 1.482602218505602;

/** Summary of one set of values (residuals, innovations or raw ranges). */
export interface ValueSummary {
  count: number;
  mean?: number;
  /** Sample standard deviation (divisor n - 1). */
  std?: number;
  median?: number;
  /** Median absolute deviation from the median (unscaled). */
  mad?: number;
  rms?: number;
  /** Lag-1 autocorrelation in the given order. */
  rho1?: number;
  /** Standard error of the mean with the AR(1) effective sample size. */
  meanSigma?: number;
}

/** Median of a numeric array (a copy is reordered; the input is untouched); NaN for an empty input. */
export function median(values: ArrayLike<number>): number {
  return values.length === 0 ? NaN : medianInPlace(Float64Array.from(values));
}

/**
 * Summary of the finite values of `values` (in their given order, which matters only for `rho1`). Non-finite
 * values are skipped. This is the per-anchor / per-pair statistics function used throughout the UWB block.
 */
export function summarizeValues(values: ArrayLike<number>): ValueSummary {
  const all = values.length;
  let n = 0;
  for (let k = 0; k < all; k++) if (Number.isFinite(values[k])) n++;
  if (n === 0) return { count: 0 };
  const finite = new Float64Array(n);
  let o = 0;
  for (let k = 0; k < all; k++) {
    const v = values[k];
    if (Number.isFinite(v)) finite[o++] = v;
  }
  return summarizeFiniteInPlace(finite, n);
}

/**
 * {@link summarizeValues} of finite[0..n), all finite, in their order; reorders `finite` (its median and MAD are
 * selected in place). For callers that own a scratch copy of finite values: no further copy is made.
 */
export function summarizeFiniteInPlace(finite: Float64Array, n: number): ValueSummary {
  if (n === 0) return { count: 0 };
  let sum = 0;
  let sumSq = 0;
  for (let k = 0; k < n; k++) {
    sum += finite[k];
    sumSq += finite[k] * finite[k];
  }
  const mean = sum / n;
  const out: ValueSummary = { count: n, mean, rms: Math.sqrt(sumSq / n) };
  if (n >= 2) {
    let ss = 0;
    let lag = 0;
    let prev = finite[0] - mean;
    ss += prev * prev;
    for (let k = 1; k < n; k++) {
      const d = finite[k] - mean;
      ss += d * d;
      lag += d * prev;
      prev = d;
    }
    out.std = Math.sqrt(ss / (n - 1));
    const rho1 = ss > 0 ? lag / ss : 0;
    out.rho1 = rho1;
    const r = Math.min(0.99, Math.max(0, rho1));
    const nEff = Math.max(1, (n * (1 - r)) / (1 + r));
    out.meanSigma = out.std / Math.sqrt(nEff);
  }
  // Order no longer matters: select in place.
  const med = radixMedian(finite, n);
  out.median = med;
  for (let k = 0; k < n; k++) finite[k] = Math.abs(finite[k] - med);
  out.mad = radixMedian(finite, n);
  return out;
}

/** Predicted two-way range from `p` to anchor `s`, metres. */
export function predictedRange_m(p: Vec3_m, s: Vec3_m): number {
  return norm3(p[0] - s[0], p[1] - s[1], p[2] - s[2]);
}

/** Predicted TDOA range difference r_j - r_i at `p`, metres. */
export function predictedTdoa_m(p: Vec3_m, si: Vec3_m, sj: Vec3_m): number {
  return predictedRange_m(p, sj) - predictedRange_m(p, si);
}

/** A position track: columns x, y, z over ascending time `t_s` (length `length`). */
export interface Track {
  t_s: Float64Array;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  length: number;
}

/**
 * Build a track from possibly unsorted time and position columns, keeping only rows with finite time and position,
 * ordered by time (stable). `offset_s` is added to the times.
 */
export function makeTrack(t_s: Float64Array, x: Float64Array, y: Float64Array, z: Float64Array, length: number, offset_s = 0): Track {
  let n = 0;
  let sorted = true;
  let lastT = -Infinity;
  for (let k = 0; k < length; k++) {
    const t = t_s[k];
    // v - v === 0 is the finiteness test without a call (NaN and +-Infinity give NaN); the first pass over a long log
    if (t - t === 0 && x[k] - x[k] === 0 && y[k] - y[k] === 0 && z[k] - z[k] === 0) {
      n++;
      if (t < lastT) sorted = false;
      lastT = t;
    }
  }
  // Every sample usable, in time order, no shift: the track is a view of the columns (a long log's copies cost
  // more than everything the track is used for). Callers never write to a track's columns.
  if (n === length && sorted && offset_s === 0) {
    return { t_s: t_s.subarray(0, n), x: x.subarray(0, n), y: y.subarray(0, n), z: z.subarray(0, n), length: n };
  }
  const keep = new Int32Array(n);
  let o = 0;
  for (let k = 0; k < length; k++) {
    if (Number.isFinite(t_s[k]) && Number.isFinite(x[k]) && Number.isFinite(y[k]) && Number.isFinite(z[k])) keep[o++] = k;
  }
  const order = sorted ? keep : Int32Array.from(Array.from(keep).sort((a, b) => t_s[a] - t_s[b] || a - b));
  const track: Track = { t_s: new Float64Array(n), x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n), length: n };
  for (let q = 0; q < n; q++) {
    const k = order[q];
    track.t_s[q] = t_s[k] + offset_s;
    track.x[q] = x[k];
    track.y[q] = y[k];
    track.z[q] = z[k];
  }
  return track;
}

/** Largest gap the interpolation bridges: 10 median steps, at least 1 s (common practice for reference paths). */
export function maxBridgedGap_s(track: Track): number {
  if (track.length < 2) return 0;
  const steps: number[] = [];
  const stride = Math.max(1, Math.floor(track.length / 10000));
  for (let k = stride; k < track.length; k += stride) steps.push(track.t_s[k] - track.t_s[k - stride]);
  return Math.max(1, 10 * (median(steps) / stride));
}

/**
 * Linear interpolation of the track at ascending-or-not query times; NaN outside the track's span or across a
 * gap longer than `maxGap_s`. Returns three columns aligned with `tq`.
 */
export function interpolateTrack(track: Track, tq: ArrayLike<number>, maxGap_s = maxBridgedGap_s(track)): { x: Float64Array; y: Float64Array; z: Float64Array } {
  const n = tq.length;
  const x = new Float64Array(n).fill(NaN);
  const y = new Float64Array(n).fill(NaN);
  const z = new Float64Array(n).fill(NaN);
  const T = track.t_s;
  const m = track.length;
  if (m === 0) return { x, y, z };
  let hint = 0;
  for (let q = 0; q < n; q++) {
    const t = tq[q];
    if (!(t >= T[0] && t <= T[m - 1])) continue;
    // Walk from the previous bracket (queries are mostly ascending), binary search otherwise.
    if (!(T[hint] <= t && (hint + 1 >= m || t <= T[hint + 1]))) {
      if (hint + 1 < m && T[hint + 1] <= t && (hint + 2 >= m || t <= T[hint + 2])) hint++;
      else {
        let lo = 0;
        let hi = m - 1;
        while (hi - lo > 1) {
          const mid = (lo + hi) >> 1;
          if (T[mid] <= t) lo = mid;
          else hi = mid;
        }
        hint = lo;
      }
    }
    const k0 = hint;
    const k1 = Math.min(m - 1, hint + 1);
    const span = T[k1] - T[k0];
    if (span > maxGap_s) continue;
    const w = span > 0 ? (t - T[k0]) / span : 0;
    x[q] = track.x[k0] + w * (track.x[k1] - track.x[k0]);
    y[q] = track.y[k0] + w * (track.y[k1] - track.y[k0]);
    z[q] = track.z[k0] + w * (track.z[k1] - track.z[k0]);
  }
  return { x, y, z };
}

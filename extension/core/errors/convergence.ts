/**
 * Convergence of an error norm within one segment (from a start, or from an estimator reset).
 *
 * Definitions (documented in docs/errors.md):
 * - level(t): trailing root-mean-square of the error norm over `smooth_s` seconds (window_s / 5 by default);
 * - steady state L: root-mean-square of the error norm over the last half of the segment;
 * - settling time: the first time after which level(t) stays at or below SETTLE_FACTOR * L until the segment's
 *   end, measured from the segment start (0 when the level never exceeds it);
 * - rate: lambda (1/s) of level(t) ≈ A exp(-lambda t), by least squares on ln level(t) over the transient
 *   [segment start, settling time]; absent with fewer than 3 transient epochs or a non-decaying fit.
 */

/** The k in "stays within k times its steady-state level". */
export const SETTLE_FACTOR = 2;

/** Convergence figures of one error block in one segment. */
export interface Convergence {
  /** Steady-state RMS of the error norm (units of the error). */
  steadyState?: number;
  /** Seconds from the segment start until the error stays within SETTLE_FACTOR x steady state. */
  settleTime?: number;
  /** Log time at which it settled. */
  tSettled?: number;
  /** Exponential decay rate of the error norm over the transient, 1/s. */
  rate?: number;
  /** 1 / rate, seconds. */
  timeConstant?: number;
  /** Initial level of the fitted exponential (units of the error). */
  initialLevel?: number;
}

/** Work columns of {@link convergence}, reusable across calls: each at least as long as the segment. */
export interface ConvergenceScratch {
  idx: Int32Array;
  level: Float64Array;
}

/**
 * Convergence of `norm` (per epoch, NaN where absent) over epochs [i0, i1) with times t_s.
 * @param scratch optional work columns of at least i1 - i0 values (made when absent or too short)
 */
export function convergence(t_s: Float64Array, norm: Float64Array, i0: number, i1: number, smooth_s: number,
  scratch?: ConvergenceScratch): Convergence {
  const len = Math.max(0, i1 - i0);
  const idx = scratch && scratch.idx.length >= len ? scratch.idx : new Int32Array(len);
  // the last usable epoch first, so that one pass lists the usable epochs and sums the steady state's squares
  let last = i1 - 1;
  while (last >= i0 && !(Number.isFinite(norm[last]) && Number.isFinite(t_s[last]))) last--;
  if (last < i0) return {};
  const tStart = t_s[i0];
  const tEnd = t_s[last];
  const half = tStart + (tEnd - tStart) / 2;
  const sums = new Float64Array(2);
  const count = finiteEpochs(t_s, norm, i0, i1, idx, half, sums);
  if (count < 4) return {};
  if (sums[1] === 0) return {};
  const steady = Math.sqrt(sums[0] / sums[1]);
  // trailing RMS over smooth_s (two pointers)
  const level = scratch && scratch.level.length >= len ? scratch.level : new Float64Array(len);
  const limit = SETTLE_FACTOR * steady;
  const lastAbove = trailingLevels(t_s, norm, idx, count, smooth_s, limit, level);
  const out: Convergence = { steadyState: steady };
  if (lastAbove < 0) { out.settleTime = 0; out.tSettled = tStart; return out; }
  if (lastAbove === count - 1) return out; // never settled
  const settledAt = t_s[idx[lastAbove + 1]];
  out.settleTime = settledAt - tStart;
  out.tSettled = settledAt;
  // log-linear least squares over the transient
  const [n, st, sy, stt, sty] = logLinearSums(t_s, idx, level, lastAbove + 2, tStart);
  if (n >= 3) {
    const den = n * stt - st * st;
    if (den > 0) {
      const slope = (n * sty - st * sy) / den;
      const icpt = (sy - slope * st) / n;
      if (slope < 0) { out.rate = -slope; out.timeConstant = -1 / slope; out.initialLevel = Math.exp(icpt); }
    }
  }
  return out;
}

// One loop per function below: this stage runs once per process, and a loop followed by code that has not run yet
// falls back to V8's slow tier for thousands of epochs (see track.ts).

/**
 * Epochs of [i0, i1) with a finite norm and time, ascending, into idx; returns their count. The sum of the squared
 * norms of those at or after `from` into sums[0], their count into sums[1].
 */
function finiteEpochs(t_s: Float64Array, norm: Float64Array, i0: number, i1: number, idx: Int32Array, from: number, sums: Float64Array): number {
  let count = 0, ss = 0, sc = 0;
  for (let k = i0; k < i1; k++) {
    idx[count] = k;
    const v = norm[k], t = t_s[k];
    if (Number.isFinite(v) && Number.isFinite(t)) {
      count++;
      if (t >= from) { ss += v * v; sc++; }
    }
  }
  sums[0] = ss; sums[1] = sc;
  return count;
}

/**
 * Trailing RMS of the norm over `smooth_s` at each listed epoch into `level` (two pointers); returns the last
 * position whose level exceeds `limit` (-1 when none).
 */
function trailingLevels(t_s: Float64Array, norm: Float64Array, idx: Int32Array, count: number, smooth_s: number, limit: number,
  level: Float64Array): number {
  let j = 0, acc = 0, lastAbove = -1;
  for (let m = 0; m < count; m++) {
    const k = idx[m];
    acc += norm[k] * norm[k];
    while (t_s[idx[j]] < t_s[k] - smooth_s) { acc -= norm[idx[j]] * norm[idx[j]]; j++; }
    const v = Math.sqrt(Math.max(0, acc) / (m - j + 1));
    level[m] = v;
    if (v > limit) lastAbove = m;
  }
  return lastAbove;
}

/** Sums n, sum x, sum y, sum x^2, sum x y of x = t - tStart, y = ln level over the first `upto` listed epochs (level > 0). */
function logLinearSums(t_s: Float64Array, idx: Int32Array, level: Float64Array, upto: number, tStart: number): number[] {
  let n = 0, st = 0, sy = 0, stt = 0, sty = 0;
  for (let m = 0; m < upto; m++) {
    if (!(level[m] > 0)) continue;
    const x = t_s[idx[m]] - tStart, y = Math.log(level[m]);
    n++; st += x; sy += y; stt += x * x; sty += x * y;
  }
  return [n, st, sy, stt, sty];
}

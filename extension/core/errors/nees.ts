/**
 * Normalized estimation error squared (NEES) of one error block, and its windowed consistency test.
 *
 * NEES(k) = e(k)^T P(k)^-1 e(k), chi-square with n = dim(e) dof when the filter is consistent (Bar-Shalom, Li and
 * Kirubarajan 2001, sec. 5.4). Per epoch the two-sided `confidence` interval of chi2(n) is the band.
 *
 * Windowed test on a single run. Estimation errors are autocorrelated, so the K epochs of a window are not K
 * independent chi-square draws and the time-average bound chi2(K n)/K would be far too narrow. We use an effective
 * sample size:
 *   n_eff = K / (1 + 2 sum_{k=1}^{L} (1 - k/K) rho_k),
 * the variance of the mean of a stationary sequence, where rho_k is the lag-k autocorrelation of the NEES
 * sequence. For Gaussian errors with independent components, corr(NEES(t), NEES(t+k)) = mean_i r_i(k)^2, with
 * r_i(k) the autocorrelation of the normalised error component z_i = e_i / sigma_i; r_i(k) is estimated over the
 * whole segment (mean removed, biased estimator), averaged over components, and the sum is truncated at the
 * first lag L where the averaged r(k) is no longer positive (at most MAX_ACF_LAG lags).
 * The window mean is then compared with chi2(n n_eff)/n_eff (same mean n and variance 2n/n_eff).
 * A family of W windows per block is tested at level familyAlpha / W each (Bonferroni), so a consistent run raises
 * a false `inconsistent` finding for the block with probability at most familyAlpha (up to the approximation).
 * This single-run test is weaker than the N-run Monte Carlo test (montecarlo.ts): n_eff is estimated, not known.
 */
import { inverseQuadraticForm } from '../linalg/cholesky';
import { chi2Cdf, chi2Interval, chi2Quantile, chi2Sf } from '../stats/chi2';

/** Largest autocorrelation lag used for the effective sample size. */
export const MAX_ACF_LAG = 500;

/** Covariance of one block per epoch: either 1-sigma columns (diagonal) or indices into a full logged P. */
export interface BlockCovariance {
  /** 1-sigma per component (same units as the error), NaN where absent. */
  sigma?: Float64Array[];
  /** Full covariance: `matrix` holds length*N*N values row-major per epoch; `indices` pick this block's states. */
  full?: { matrix: Float64Array; size: number; indices: number[] };
}

/**
 * NEES per epoch of the error components `err` (each a column) under `cov`. NaN where an error component, a
 * sigma or the covariance is missing or not positive definite. No allocation per epoch.
 */
export function neesSeries(err: Float64Array[], cov: BlockCovariance, length: number): Float64Array {
  const n = err.length;
  const out = new Float64Array(length).fill(NaN);
  const v = new Float64Array(n);
  const a = new Float64Array(n * n);
  const work = new Float64Array(n * n + n);
  for (let k = 0; k < length; k++) {
    let ok = true;
    for (let i = 0; i < n; i++) { v[i] = err[i][k]; if (!Number.isFinite(v[i])) ok = false; }
    if (!ok) continue;
    if (cov.full) {
      const { matrix, size, indices } = cov.full;
      const base = k * size * size;
      for (let r = 0; r < n; r++) for (let c = 0; c < n; c++) a[r * n + c] = matrix[base + indices[r] * size + indices[c]];
      out[k] = inverseQuadraticForm(a, 0, n, v, 0, work);
    } else if (cov.sigma) {
      let q = 0;
      for (let i = 0; i < n; i++) {
        const s = cov.sigma[i][k];
        if (!(s > 0) || !Number.isFinite(s)) { q = NaN; break; }
        q += (v[i] / s) * (v[i] / s);
      }
      out[k] = q;
    }
  }
  return out;
}

/** 1-sigma of component `i` per epoch from a block covariance (sqrt of the diagonal of P when full). */
export function componentSigma(cov: BlockCovariance, i: number, length: number): Float64Array | undefined {
  if (cov.sigma) return cov.sigma[i];
  if (!cov.full) return undefined;
  const { matrix, size, indices } = cov.full;
  const out = new Float64Array(length);
  const j = indices[i];
  for (let k = 0; k < length; k++) {
    const d = matrix[k * size * size + j * size + j];
    out[k] = d >= 0 ? Math.sqrt(d) : NaN;
  }
  return out;
}

/**
 * Autocorrelation of the NEES sequence over [i0, i1) implied by the normalised error components z_i:
 * rho(k) = mean_i r_i(k)^2, for k = 1..L, truncated at the first lag where mean_i r_i(k) <= 0.
 * Epochs where a component is NaN are skipped pairwise. Returns the rho values (length L, possibly 0).
 */
export function neesAutocorrelation(z: Float64Array[], i0: number, i1: number): Float64Array {
  const m = i1 - i0;
  const maxLag = Math.min(MAX_ACF_LAG, Math.floor(m / 4));
  if (maxLag < 1 || z.length === 0) return new Float64Array(0);
  const means = z.map((c) => {
    let s = 0, cnt = 0;
    for (let k = i0; k < i1; k++) if (Number.isFinite(c[k])) { s += c[k]; cnt++; }
    return cnt > 0 ? s / cnt : NaN;
  });
  const vars = z.map((c, i) => {
    let s = 0, cnt = 0;
    for (let k = i0; k < i1; k++) if (Number.isFinite(c[k])) { const d = c[k] - means[i]; s += d * d; cnt++; }
    return cnt > 1 ? s / cnt : NaN;
  });
  const rho: number[] = [];
  for (let lag = 1; lag <= maxLag; lag++) {
    let sumR = 0, sumR2 = 0, comps = 0;
    for (let i = 0; i < z.length; i++) {
      const c = z[i];
      if (!(vars[i] > 0)) continue;
      let s = 0, cnt = 0;
      for (let k = i0; k + lag < i1; k++) {
        const a = c[k], b = c[k + lag];
        if (Number.isFinite(a) && Number.isFinite(b)) { s += (a - means[i]) * (b - means[i]); cnt++; }
      }
      if (cnt === 0) continue;
      const r = s / (m * vars[i]); // biased estimator (divides by the series length), as in Box-Jenkins
      sumR += r; sumR2 += r * r; comps++;
    }
    if (comps === 0 || !(sumR / comps > 0)) break;
    rho.push(sumR2 / comps);
  }
  return Float64Array.from(rho);
}

/** Effective number of independent values in a window of K epochs: K / (1 + 2 sum (1 - k/K) rho_k), in [1, K]. */
export function effectiveSampleSize(K: number, rho: Float64Array): number {
  let s = 0;
  for (let k = 1; k <= rho.length && k < K; k++) s += (1 - k / K) * rho[k - 1];
  const nEff = K / (1 + 2 * s);
  return Math.max(1, Math.min(K, nEff));
}

/** Two-sided interval of the mean of n_eff (possibly fractional) independent chi2(dof) values. */
export function meanInterval(confidence: number, dof: number, nEff: number): [number, number] {
  const a = (1 - confidence) / 2;
  return [chi2Quantile(a, dof * nEff) / nEff, chi2Quantile(1 - a, dof * nEff) / nEff];
}

/** Two-sided tail probability of a window mean under chi2(dof n_eff)/n_eff. */
export function meanTwoSidedP(mean: number, dof: number, nEff: number): number {
  const x = mean * nEff, k = dof * nEff;
  return Math.min(1, 2 * Math.min(chi2Cdf(x, k), chi2Sf(x, k)));
}

/** One window of the windowed NEES test. */
export interface NeesWindow {
  t: number;
  tEnd: number;
  /** Epochs with a NEES value. */
  count: number;
  mean: number;
  nEff: number;
  /** `confidence` interval of the mean. */
  bounds: [number, number];
  /** Two-sided p of the mean. */
  p: number;
  /** Outside the family-corrected interval. */
  flagged: boolean;
  side?: 'overconfident' | 'pessimistic';
}

/**
 * Split [i0, i1) into consecutive windows of `window_s` seconds (or `windowEpochs` epochs when given) starting at
 * t[i0]; a trailing window with fewer than half the epochs of the one before is merged into it.
 * Returns the boundary indices [b0 = i0, b1, ..., bW = i1].
 */
export function windowBoundaries(t_s: Float64Array, i0: number, i1: number, window_s: number, windowEpochs?: number): number[] {
  const b = [i0];
  if (i1 <= i0) return b;
  if (windowEpochs && windowEpochs > 0) {
    for (let i = i0 + windowEpochs; i < i1; i += windowEpochs) b.push(i);
  } else {
    let next = t_s[i0] + window_s;
    for (let i = i0; i < i1; i++) {
      if (t_s[i] >= next) { b.push(i); while (t_s[i] >= next) next += window_s; }
    }
  }
  b.push(i1);
  if (b.length > 2) {
    const last = b[b.length - 1] - b[b.length - 2];
    const prev = b[b.length - 2] - b[b.length - 3];
    if (last < prev / 2) b.splice(b.length - 2, 1);
  }
  return b;
}

/**
 * Window statistics of one block's NEES over the given boundaries (one segment). The family-corrected level per
 * window, `alphaPerWindow`, is set by the caller (familyAlpha / total windows of the block).
 */
export function neesWindows(
  t_s: Float64Array, nees: Float64Array, dof: number, bounds: number[], rho: Float64Array,
  confidence: number, alphaPerWindow: number,
): NeesWindow[] {
  const out: NeesWindow[] = [];
  for (let w = 0; w + 1 < bounds.length; w++) {
    const a = bounds[w], b = bounds[w + 1];
    let s = 0, cnt = 0;
    for (let k = a; k < b; k++) if (Number.isFinite(nees[k])) { s += nees[k]; cnt++; }
    if (cnt < 2) continue;
    const mean = s / cnt;
    const nEff = effectiveSampleSize(cnt, rho);
    const p = meanTwoSidedP(mean, dof, nEff);
    const flagged = p < alphaPerWindow;
    out.push({
      t: t_s[a], tEnd: t_s[b - 1], count: cnt, mean, nEff,
      bounds: meanInterval(confidence, dof, nEff), p, flagged,
      ...(flagged ? { side: mean > dof ? 'overconfident' as const : 'pessimistic' as const } : {}),
    });
  }
  return out;
}

/** Summary of a NEES sequence over [i0, i1): mean and share inside the per-epoch `confidence` interval. */
export function neesSummary(nees: Float64Array, dof: number, confidence: number, i0 = 0, i1 = nees.length):
  { dof: number; mean?: number; inside95?: number; bounds95: [number, number]; count: number } {
  const [lo, hi] = chi2Interval(confidence, dof);
  let s = 0, cnt = 0, inside = 0;
  for (let k = i0; k < i1; k++) {
    const v = nees[k];
    if (!Number.isFinite(v)) continue;
    s += v; cnt++;
    if (v >= lo && v <= hi) inside++;
  }
  return cnt > 0 ? { dof, mean: s / cnt, inside95: inside / cnt, bounds95: [lo, hi], count: cnt } : { dof, bounds95: [lo, hi], count: 0 };
}

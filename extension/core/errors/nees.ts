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
 * The window sum of NEES is a Gaussian quadratic form; its first three cumulants follow from the r_i(k) (the second
 * gives n_eff above), and its distribution is taken as Pearson's three-moment scaled, shifted chi-square (exact
 * for white errors, where it is chi2(K n)). Matching only two moments, chi2(n n_eff)/n_eff, under-states the upper
 * tail of correlated sums and raised about twice the intended false findings in our simulations. Pearson's form is
 * accurate in the upper tail but far too light in the lower one (its support starts at b > 0), so the lower tail
 * uses the two-moment scaled chi-square g chi2(h), g = kappa2 / (2 kappa1), h = 2 kappa1^2 / kappa2, which is
 * conservative there (checked against simulation: true lower-tail 1e-3 reads as about 5e-3).
 * A family of W windows per block is tested at level familyAlpha / W each (Bonferroni), so a consistent run raises
 * a false `inconsistent` finding for the block with probability at most familyAlpha (up to the approximation).
 * This single-run test is weaker than the N-run Monte Carlo test (montecarlo.ts): n_eff is estimated, not known.
 */
import { inverseQuadraticForm } from '../linalg/cholesky';
import { chi2Cdf, chi2Interval, chi2Quantile, chi2Sf } from '../stats/chi2';
import { giveBack, takeFloat64 } from '../scratch';
import { fourLagSums, lagProductsByFft } from '../stats/autocorrelation';

/** Largest autocorrelation lag used for the effective sample size. */
export const MAX_ACF_LAG = 500;

/** Most epochs (the last ones of a segment) used to estimate the autocorrelation. */
export const ACF_MAX_EPOCHS = 100_000;
/**
 * Lags summed directly (in time order, four per pass); a sequence still correlated beyond them has its remaining lags
 * from an FFT of the whole segment (stats/autocorrelation.ts lagProductsByFft), O(m log m) instead of O(m x lags).
 */
export const DIRECT_ACF_LAGS = 32;

/** Covariance of one block per epoch: either 1-sigma columns (diagonal) or indices into a full logged P. */
export interface BlockCovariance {
  /** 1-sigma per component (same units as the error), NaN where absent. */
  sigma?: Float64Array[];
  /** Full covariance: `matrix` holds length*N*N values row-major per epoch; `indices` pick this block's states. */
  full?: { matrix: Float64Array; size: number; indices: number[] };
}

/**
 * NEES per epoch of the error components `err` (each a column) under `cov`. NaN where an error component, a
 * sigma or the covariance is missing or not positive definite. No allocation per epoch. Written into `into` when it
 * is `length` long (any contents), else into a new column.
 */
export function neesSeries(err: Float64Array[], cov: BlockCovariance, length: number, into?: Float64Array): Float64Array {
  const n = err.length;
  const out = into && into.length === length ? into : new Float64Array(length);
  if (n === 3 && cov.sigma && !cov.full) return neesSeriesSigma3(err, cov.sigma, length, out);
  out.fill(NaN);
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

/**
 * {@link neesSeries} of three components with 1-sigma columns, written out: one pass that writes every value once
 * (the general loop's pre-fill and per-component inner loops cost ~3x on a long log); the same sum in the same order.
 */
function neesSeriesSigma3(err: Float64Array[], sigma: Float64Array[], length: number, out: Float64Array): Float64Array {
  const [e0, e1, e2] = err, [s0, s1, s2] = sigma;
  for (let k = 0; k < length; k++) {
    const v0 = e0[k], v1 = e1[k], v2 = e2[k], a = s0[k], b = s1[k], c = s2[k];
    const ok = Number.isFinite(v0) && Number.isFinite(v1) && Number.isFinite(v2) &&
      a > 0 && Number.isFinite(a) && b > 0 && Number.isFinite(b) && c > 0 && Number.isFinite(c);
    // 0 + x = x for the first (non-negative) term: the general loop's sum, one store for both branches (track.ts)
    out[k] = ok ? (v0 / a) * (v0 / a) + (v1 / b) * (v1 / b) + (v2 / c) * (v2 / c) : NaN;
  }
  return out;
}

/**
 * 1-sigma of component `i` per epoch from a block covariance (sqrt of the diagonal of P when full; that column from
 * `column` when given and `length` long).
 */
export function componentSigma(cov: BlockCovariance, i: number, length: number, column?: () => Float64Array): Float64Array | undefined {
  if (cov.sigma) return cov.sigma[i];
  if (!cov.full) return undefined;
  const { matrix, size, indices } = cov.full;
  const made = column?.();
  const out = made && made.length === length ? made : new Float64Array(length);
  const j = indices[i];
  for (let k = 0; k < length; k++) {
    const d = matrix[k * size * size + j * size + j];
    out[k] = d >= 0 ? Math.sqrt(d) : NaN;
  }
  return out;
}

/**
 * Autocorrelations r_i(k), k = 1..L, of the normalised error components z_i over [i0, i1) (mean removed, biased
 * estimator dividing by the series length, as in Box-Jenkins); NaN epochs are skipped pairwise. L is common to all
 * components: the sum is truncated at the first lag where the component-averaged r(k) is no longer positive
 * (at most MAX_ACF_LAG, and a quarter of the series).
 */
export function errorAutocorrelations(z: Float64Array[], i0In: number, i1: number): Float64Array[] {
  return autocorrelationsOf(z, undefined, i0In, i1);
}

/**
 * {@link errorAutocorrelations} of the normalised error components z_i = err_i / sigma_i (a component without sigma
 * is all NaN), computed without the z columns: the same values, sums and truncation.
 */
export function normalisedErrorAutocorrelations(err: Float64Array[], sigma: (Float64Array | undefined)[], i0In: number, i1: number): Float64Array[] {
  return autocorrelationsOf(err, sigma, i0In, i1);
}

/**
 * The autocorrelations of z_i = num_i / den_i (den absent: z_i = num_i; den_i absent in the list: all NaN).
 * Hand-tuned (~4x the former per-lag closures on long segments, where up to 500 lags x 100,000 epochs are summed):
 * each component is centred once into a work column (NaN where z is not finite, so a pair is skipped exactly when
 * one of its values is), and four lags are summed in one sweep with four accumulators; every sum still adds the
 * same products in the same order as the plain definition. Lags beyond DIRECT_ACF_LAGS (only errors still correlated
 * there get so far) come from one FFT per component instead (lagProductsByFft: equal to about 1e-15 of r(0)): 500
 * lags of 100,000 epochs summed directly took most of the errors stage on strongly correlated position errors.
 */
function autocorrelationsOf(num: Float64Array[], den: (Float64Array | undefined)[] | undefined, i0In: number, i1: number): Float64Array[] {
  // Long segments: the last ACF_MAX_EPOCHS epochs (after any transient) are plenty for the estimate.
  const i0 = Math.max(i0In, i1 - ACF_MAX_EPOCHS);
  const m = i1 - i0;
  const maxLag = Math.min(MAX_ACF_LAG, Math.floor(m / 4));
  const nc = num.length;
  const out: number[][] = num.map(() => []);
  if (maxLag < 1 || nc === 0) return out.map((r) => Float64Array.from(r));
  const vars: number[] = [];
  const sums = new Float64Array(6);
  const centred: (Float64Array | undefined)[] = [];
  const gaps: boolean[] = [];
  if (nc === 3 && den && den[0] && den[1] && den[2]) {
    // three normalised components (the usual block): each pass reads all three, one call per pass
    const means = new Float64Array(3);
    finiteMeans3(num, den as Float64Array[], i0, i1, means);
    const ds = [takeFloat64(m), takeFloat64(m), takeFloat64(m)];
    centre3(num, den as Float64Array[], i0, i1, means, ds, sums);
    for (let i = 0; i < 3; i++) {
      const cnt2 = sums[3 + i];
      const variance = cnt2 > 1 ? sums[i] / cnt2 : NaN;
      vars.push(variance);
      if (variance > 0) { centred.push(ds[i]); gaps.push(cnt2 < m); } else { giveBack(ds[i]); centred.push(undefined); gaps.push(true); }
    }
  }
  for (let i = centred.length; i < nc; i++) {
    const c = num[i];
    const sd = den ? den[i] : undefined;
    if (den && !sd) { vars.push(NaN); centred.push(undefined); gaps.push(true); continue; }
    const mean = finiteMean(c, sd, i0, i1);
    const d = takeFloat64(m);
    const cnt2 = centre(c, sd, i0, i1, mean, d, sums);
    const variance = cnt2 > 1 ? sums[0] / cnt2 : NaN;
    vars.push(variance);
    if (variance > 0) { centred.push(d); gaps.push(cnt2 < m); } else { giveBack(d); centred.push(undefined); gaps.push(true); }
  }
  const r = new Float64Array(4 * nc);
  // Past DIRECT_ACF_LAGS lags (strongly correlated errors) the rest come from one FFT per component.
  let byFft: (Float64Array | undefined)[] | undefined;
  let lag = 1;
  done: while (lag <= maxLag) {
    const B = Math.min(4, maxLag - lag + 1);
    if (!byFft && lag > DIRECT_ACF_LAGS) byFft = centred.map((d) => (d ? lagProductsByFft(d, m, maxLag) : undefined));
    for (let i = 0; i < nc; i++) {
      const d = centred[i];
      if (!d) { for (let j = 0; j < B; j++) r[4 * i + j] = 0; continue; }
      const f = byFft?.[i];
      if (f) for (let j = 0; j < B; j++) sums[j] = f[lag + j];
      else lagSums(d, m, lag, B, gaps[i], sums);
      for (let j = 0; j < B; j++) r[4 * i + j] = sums[j] / (m * vars[i]);
    }
    for (let j = 0; j < B; j++, lag++) {
      let s = 0;
      for (let i = 0; i < nc; i++) s += r[4 * i + j];
      if (!(s / nc > 0)) break done;
      for (let i = 0; i < nc; i++) out[i].push(r[4 * i + j]);
    }
  }
  giveBack(...centred);
  return out.map((rr) => Float64Array.from(rr));
}

// One loop per function below: the stage runs once per process, and V8 compiles a long loop well only when it is
// alone in its function (see track.ts).

/** Mean of the finite z = num / den (den absent: z = num) over [i0, i1); NaN when there is none. */
function finiteMean(num: Float64Array, den: Float64Array | undefined, i0: number, i1: number): number {
  let s = 0, cnt = 0;
  for (let k = i0; k < i1; k++) { const v = den ? num[k] / den[k] : num[k]; if (Number.isFinite(v)) { s += v; cnt++; } }
  return cnt > 0 ? s / cnt : NaN;
}

/**
 * d[k - i0] = z - mean where z = num / den is finite, NaN elsewhere; the sum of squares into out[0]; returns the
 * count of finite z.
 */
function centre(num: Float64Array, den: Float64Array | undefined, i0: number, i1: number, mean: number, d: Float64Array, out: Float64Array): number {
  let ss = 0, cnt = 0;
  for (let k = i0; k < i1; k++) {
    const v = den ? num[k] / den[k] : num[k];
    const ok = Number.isFinite(v);
    const dv = v - mean;
    if (ok) { ss += dv * dv; cnt++; }
    d[k - i0] = ok ? dv : NaN;
  }
  out[0] = ss;
  return cnt;
}

/** {@link finiteMean} of three components num[c] / den[c] in one pass, into out[c]. */
function finiteMeans3(num: Float64Array[], den: Float64Array[], i0: number, i1: number, out: Float64Array): void {
  const [a, b, c] = num, [p, q, r] = den;
  let s0 = 0, s1 = 0, s2 = 0, n0 = 0, n1 = 0, n2 = 0;
  for (let k = i0; k < i1; k++) {
    const v0 = a[k] / p[k], v1 = b[k] / q[k], v2 = c[k] / r[k];
    if (Number.isFinite(v0)) { s0 += v0; n0++; }
    if (Number.isFinite(v1)) { s1 += v1; n1++; }
    if (Number.isFinite(v2)) { s2 += v2; n2++; }
  }
  out[0] = n0 > 0 ? s0 / n0 : NaN; out[1] = n1 > 0 ? s1 / n1 : NaN; out[2] = n2 > 0 ? s2 / n2 : NaN;
}

/** {@link centre} of three components in one pass: d[c], sums of squares into out[0..3), counts into out[3..6). */
function centre3(num: Float64Array[], den: Float64Array[], i0: number, i1: number, means: Float64Array, d: Float64Array[], out: Float64Array): void {
  const [a, b, c] = num, [p, q, r] = den, [d0, d1, d2] = d;
  const m0 = means[0], m1 = means[1], m2 = means[2];
  let ss0 = 0, ss1 = 0, ss2 = 0, n0 = 0, n1 = 0, n2 = 0;
  for (let k = i0; k < i1; k++) {
    const v0 = a[k] / p[k], v1 = b[k] / q[k], v2 = c[k] / r[k];
    const ok0 = Number.isFinite(v0), ok1 = Number.isFinite(v1), ok2 = Number.isFinite(v2);
    const e0 = v0 - m0, e1 = v1 - m1, e2 = v2 - m2;
    if (ok0) { ss0 += e0 * e0; n0++; }
    if (ok1) { ss1 += e1 * e1; n1++; }
    if (ok2) { ss2 += e2 * e2; n2++; }
    d0[k - i0] = ok0 ? e0 : NaN; d1[k - i0] = ok1 ? e1 : NaN; d2[k - i0] = ok2 ? e2 : NaN;
  }
  out[0] = ss0; out[1] = ss1; out[2] = ss2; out[3] = n0; out[4] = n1; out[5] = n2;
}

/**
 * sums[j] = sum over k of d[k] d[k + lag + j] (k + lag + j < m), j < B <= 4, over pairs of non-NaN values (`gaps`:
 * d may hold NaN), each in ascending k.
 */
function lagSums(d: Float64Array, m: number, lag: number, B: number, gaps: boolean, sums: Float64Array): void {
  // Without gaps a full block is the plain four-lag sweep of the whiteness test (same sums in the same order).
  if (!gaps && B === 4) { fourLagSums(d, m, 1, lag, sums, 0); return; }
  let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
  const kCommon = m - (lag + B - 1); // below it every lag of the block has its pair
  for (let k = 0; k < kCommon; k++) {
    const a = d[k];
    if (a !== a) continue;
    let b = d[k + lag]; if (b === b) s0 += a * b;
    if (B > 1) { b = d[k + lag + 1]; if (b === b) s1 += a * b; }
    if (B > 2) { b = d[k + lag + 2]; if (b === b) s2 += a * b; }
    if (B > 3) { b = d[k + lag + 3]; if (b === b) s3 += a * b; }
  }
  // the tails: the shorter lags have pairs beyond kCommon
  const acc = [s0, s1, s2, s3];
  for (let j = 0; j < B - 1; j++) {
    let s = acc[j];
    const L = lag + j;
    for (let k = Math.max(0, kCommon); k + L < m; k++) {
      const a = d[k], b = d[k + L];
      if (a === a && b === b) s += a * b;
    }
    acc[j] = s;
  }
  for (let j = 0; j < 4; j++) sums[j] = acc[j];
}

/**
 * Autocorrelation of the NEES sequence implied by the error components: rho(k) = mean_i r_i(k)^2 (Gaussian errors,
 * independent components), with the truncation of {@link errorAutocorrelations}.
 */
export function neesAutocorrelation(z: Float64Array[], i0: number, i1: number): Float64Array {
  const rs = errorAutocorrelations(z, i0, i1);
  if (rs.length === 0) return new Float64Array(0);
  const L = rs[0].length;
  const rho = new Float64Array(L);
  for (let k = 0; k < L; k++) {
    let s = 0;
    for (const r of rs) s += r[k] * r[k];
    rho[k] = s / rs.length;
  }
  return rho;
}

/** Effective number of independent values in a window of K epochs: K / (1 + 2 sum (1 - k/K) rho_k), in [1, K]. */
export function effectiveSampleSize(K: number, rho: Float64Array): number {
  let s = 0;
  for (let k = 1; k <= rho.length && k < K; k++) s += (1 - k / K) * rho[k - 1];
  const nEff = K / (1 + 2 * s);
  return Math.max(1, Math.min(K, nEff));
}

/**
 * Second and third cumulants of Q = sum over a window of K epochs of sum_i z_i^2, for stationary Gaussian
 * components with autocorrelations r_i: kappa2 = 2 sum_i tr(C_i^2), kappa3 = 8 sum_i tr(C_i^3), with C_i the K x K
 * Toeplitz correlation matrix (r_i(0) = 1, r_i(k) = 0 beyond its L lags). Both traces exactly, in O(L) and O(L^2):
 * tr(C^2) = K + 2 sum_k (K - k) r_k^2; tr(C^3) = sum over the index triples (i, j, l) of c_ij c_jl c_li, which with
 * a = j - i and b = l - j is sum_{a,b} r(a) r(b) r(a + b) times the number of i for which i, i + a and i + a + b all
 * lie in [0, K): K - (max(0, a, a + b) - min(0, a, a + b)) when positive. (Earlier a band-limited triple loop, O(K L^2),
 * and beyond 4e6 of its steps an approximation that ignored the window's edges.)
 */
export function windowCumulants(K: number, rs: Float64Array[]): { kappa1: number; kappa2: number; kappa3: number } {
  let k2 = 0, k3 = 0;
  for (const r of rs) {
    const L = Math.min(r.length, K - 1);
    let t2 = K;
    for (let k = 1; k <= L; k++) t2 += 2 * (K - k) * r[k - 1] * r[k - 1];
    k2 += 2 * t2; k3 += 8 * traceCube(K, r, L);
  }
  return { kappa1: K * rs.length, kappa2: k2, kappa3: k3 };
}

/**
 * tr(C^3) of the K x K Toeplitz correlation matrix with r(0) = 1 and r(k) = r[k - 1] for 1 <= k <= L (see above).
 * A term and its mirror (a, b) -> (-a, -b) are equal (r is even, the span the same), so the sum is the a = 0 row plus
 * twice the rows a > 0; within a row the span is a + b (b >= 0), a (-a <= b < 0) or -b (b < -a), three loops without
 * a max or min per term. L must be below K (every span is then below K: no term drops out).
 */
export function traceCube(K: number, r: ArrayLike<number>, L: number): number {
  // R[L + m] = r(|m|) for |m| <= L
  const R = new Float64Array(2 * L + 1);
  R[L] = 1;
  for (let m = 1; m <= L; m++) { R[L + m] = r[m - 1]; R[L - m] = r[m - 1]; }
  let rows = 0;
  for (let a = 1; a <= L; a++) rows += R[L + a] * traceCubeRow(K, R, L, a);
  return traceCubeRow(K, R, L, 0) + 2 * rows;
}

/** Sum over b of (K - span(a, b)) r(b) r(a + b), for one a >= 0, b from -L to L - a (see traceCube). */
function traceCubeRow(K: number, R: Float64Array, L: number, a: number): number {
  let s = 0;
  for (let b = 0; b <= L - a; b++) s += (K - a - b) * R[L + b] * R[L + a + b];
  for (let b = -a; b < 0; b++) s += (K - a) * R[L + b] * R[L + a + b];
  for (let b = -L; b < -a; b++) s += (K + b) * R[L + b] * R[L + a + b];
  return s;
}

/**
 * Pearson's three-moment approximation of a Gaussian quadratic form (as used by Imhof 1961): Q ≈ a chi2(nu) + b
 * with nu = 8 kappa2^3 / kappa3^2, a = kappa3 / (4 kappa2), b = kappa1 - a nu. Exact (a = 1, b = 0, nu = n K) for
 * white errors.
 */
export function pearsonApproximation(c: { kappa1: number; kappa2: number; kappa3: number }): { nu: number; a: number; b: number } {
  const nu = (8 * c.kappa2 ** 3) / (c.kappa3 * c.kappa3);
  const a = c.kappa3 / (4 * c.kappa2);
  return { nu, a, b: c.kappa1 - a * nu };
}

/** Two-sided interval of the mean of n_eff (possibly fractional) independent chi2(dof) values. */
export function meanInterval(confidence: number, dof: number, nEff: number): [number, number] {
  const a = (1 - confidence) / 2;
  return [chi2Quantile(a, dof * nEff) / nEff, chi2Quantile(1 - a, dof * nEff) / nEff];
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
  /** Family-corrected interval of the mean (two-sided level `alphaPerWindow`). */
  correctedBounds: [number, number];
  /**
   * Two-sided p of the mean, computed only where it decides the window: absent when the mean lies clearly inside the
   * family-corrected interval (its p is then at least `alphaPerWindow`; see {@link neesWindows}).
   */
  p?: number;
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

/** The law of a window's NEES sum for one epoch count: approximations and the bounds of its mean. */
interface WindowLaw {
  nu: number; a: number; b: number; g: number; h: number; nEff: number;
  lo: number; hi: number; cLo: number; cHi: number;
}

/**
 * Window statistics of one block's NEES over the given boundaries (one segment), under the autocorrelations `rs`
 * of the normalised error components. The family-corrected level per window, `alphaPerWindow`, is set by the
 * caller (familyAlpha / total windows of the block).
 */
export function neesWindows(
  t_s: Float64Array, nees: Float64Array, dof: number, bounds: number[], rs: Float64Array[],
  confidence: number, alphaPerWindow: number,
): NeesWindow[] {
  const out: NeesWindow[] = [];
  // Everything but the window's sum depends only on its epoch count: one set of quantiles per distinct count.
  const cache = new Map<number, WindowLaw>();
  const rho = new Float64Array(rs.length ? rs[0].length : 0);
  for (let k = 0; k < rho.length; k++) { let s = 0; for (const r of rs) s += r[k] * r[k]; rho[k] = s / rs.length; }
  const comps = rs.length === dof ? rs : Array.from({ length: dof }, () => new Float64Array(0));
  const half = (1 - confidence) / 2;
  for (let w = 0; w + 1 < bounds.length; w++) {
    const a0 = bounds[w], b0 = bounds[w + 1];
    const s = finiteSum(nees, a0, b0, windowCount);
    const cnt = windowCount[0];
    if (cnt < 2) continue;
    let ap = cache.get(cnt);
    if (!ap) {
      const cum = windowCumulants(cnt, comps);
      const pa = pearsonApproximation(cum);
      const g = cum.kappa2 / (2 * cum.kappa1), h = (2 * cum.kappa1 * cum.kappa1) / cum.kappa2;
      ap = {
        ...pa, g, h, nEff: effectiveSampleSize(cnt, rho),
        lo: (g * chi2Quantile(half, h)) / cnt,
        hi: (pa.a * chi2Quantile(1 - half, pa.nu) + pa.b) / cnt,
        cLo: (g * chi2Quantile(alphaPerWindow / 2, h)) / cnt,
        cHi: (pa.a * chi2Quantile(1 - alphaPerWindow / 2, pa.nu) + pa.b) / cnt,
      };
      cache.set(cnt, ap);
    }
    const mean = s / cnt;
    const { lo, hi, cLo, cHi } = ap;
    // p < alphaPerWindow exactly when the mean lies outside [cLo, cHi] (the bounds are the two laws' quantiles at
    // alphaPerWindow / 2), so the tail probabilities (two incomplete gamma functions, most of this function's time
    // on a long log) are computed only for a mean not clearly inside: a relative margin far above a quantile's
    // round-off keeps every decision that of the exact p.
    const clear = ap.a > 0 && ap.g > 0 && mean > cLo * (1 + P_MARGIN) && mean < cHi * (1 - P_MARGIN);
    let p: number | undefined;
    if (!clear) {
      // upper tail: Pearson's three moments; lower tail: two moments (scaled chi-square), conservative there
      const x = (s - ap.b) / ap.a;
      const upper = x > 0 ? chi2Sf(x, ap.nu) : 1;
      const lower = chi2Cdf(s / ap.g, ap.h);
      p = Math.min(1, 2 * Math.min(lower, upper));
    }
    const flagged = p !== undefined && p < alphaPerWindow;
    out.push({
      t: t_s[a0], tEnd: t_s[b0 - 1], count: cnt, mean, nEff: ap.nEff, bounds: [Math.max(0, lo), hi],
      correctedBounds: [Math.max(0, cLo), cHi], ...(p !== undefined ? { p } : {}), flagged,
      ...(flagged ? { side: mean > dof ? 'overconfident' as const : 'pessimistic' as const } : {}),
    });
  }
  return out;
}

const windowCount = new Float64Array(1);

/** Relative margin inside the corrected bounds beyond which a window's p is not computed (see neesWindows). */
const P_MARGIN = 1e-9;

/** Sum of the finite values of v over [i0, i1), their count into count[0] (a function of its own: see track.ts). */
function finiteSum(v: Float64Array, i0: number, i1: number, count: Float64Array): number {
  let s = 0, cnt = 0;
  for (let k = i0; k < i1; k++) if (Number.isFinite(v[k])) { s += v[k]; cnt++; }
  count[0] = cnt;
  return s;
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

/**
 * Sample autocorrelation and the portmanteau tests of whiteness built on it.
 *
 * - `autocorrelation`: the biased, mean-removed sample ACF r_k = sum_{t<n-k} (x_t - m)(x_{t+k} - m) / sum_t (x_t - m)^2
 *   (the estimator R's `acf` and the NIST e-Handbook sec. 6.4.4.8.1 use).
 * - `ljungBox`: Q = n (n + 2) sum_{k=1}^{m} r_k^2 / (n - k), chi-square with m - fitted degrees of freedom under
 *   whiteness (Ljung and Box 1978); `boxPierce`: Q = n sum r_k^2 (Box and Pierce 1970).
 * - `normalizedAutocorrelation`: the time-average normalized autocorrelation of a vector sequence,
 *   rho(j) = sum_k nu(k)^T nu(k+j) / sqrt(sum_k |nu(k)|^2 sum_k |nu(k+j)|^2), not mean-removed, approximately
 *   N(0, 1/K) for K pairs under whiteness (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4).
 *
 * All are O(n * lags) with one scratch array of n values: bounded lag counts, never O(n^2); `lagProductsByFft`
 * gives all lags of a long series at once in O(n log n). The lag sums are taken four lags per pass over the data
 * (each lag still summed in time order, so the values are the same as one pass per lag): one pass per lag cost ~4x
 * more on long series, the data being read from memory each time.
 */
import FFT from 'fft.js';
import { chi2Quantile, chi2Sf } from './chi2';
import { giveBack, takeFloat64 } from '../scratch';

/**
 * Lag products of a whole series at once: out[k] = sum_{a < len - k} x[a] x[a + k] for k = 0..maxLag, a missing value
 * (NaN) counting as absent (its products left out, as the direct sums skip them). By the Wiener-Khinchin relation:
 * the series zero-padded to a power of two of at least len + maxLag (so that no product of a lag up to maxLag wraps
 * around), the inverse transform of its power spectrum is the lag products, in O(len log len) whatever maxLag, where
 * the direct sums cost O(len maxLag) (500 lags of 100,000 epochs were most of the errors stage on strongly correlated
 * errors). The transform is fft.js (Fedor Indutny's radix-4 FFT, npm). Its rounding is about 1e-16 of sum x^2 per
 * value, not the direct sums' last bits: callers that have the first lags directly keep those.
 */
export function lagProductsByFft(x: Float64Array, len: number, maxLag: number): Float64Array {
  let size = 4;
  while (size < len + maxLag) size *= 2;
  const input = new Float64Array(size);
  for (let a = 0; a < len; a++) { const v = x[a]; input[a] = v === v ? v : 0; }
  const fft = fftOfSize(size);
  const spectrum = new Float64Array(2 * size);
  fft.realTransform(spectrum, input); // bins 0..size/2 (the rest mirror them)
  // The power spectrum is real and even, so its inverse transform is its forward transform over size: one more
  // real transform (half the work of fft.js's complex inverse).
  const power = input; // reused: the series is no longer needed
  const half = size / 2;
  for (let j = 0; j <= half; j++) {
    const re = spectrum[2 * j], im = spectrum[2 * j + 1];
    const p = re * re + im * im;
    power[j] = p;
    if (j > 0 && j < half) power[size - j] = p;
  }
  fft.realTransform(spectrum, power);
  const out = new Float64Array(maxLag + 1);
  for (let k = 0; k <= maxLag && k < len; k++) out[k] = spectrum[2 * k] / size;
  return out;
}

/**
 * The transform of one size, kept for the next call: the callers take the lag products of several series of one
 * length in a row (three components of each error block), and building fft.js's tables (a sine and a cosine per
 * point, in a plain array) took longer than a transform. One size is kept, so the memory held is that of the last
 * size used (about 32 bytes a point).
 */
let lastFft: { size: number; fft: FFT } | undefined;

function fftOfSize(size: number): FFT {
  if (lastFft?.size !== size) lastFft = { size, fft: new FFT(size) };
  return lastFft.fft;
}

/**
 * Lag products s_k = sum_{a < len - k * step} x[a] x[a + k * step] for k = k0..k0+3 into out[at + k - k0] (each summed
 * in increasing a, as a plain loop per lag would; `at` defaults to k0 - 1, i.e. out[k - 1]). Every k must be <= the
 * caller's maxLag. Also the gap-free path of the NEES autocorrelations (errors/nees.ts).
 */
export function fourLagSums(x: Float64Array, len: number, step: number, k0: number, out: Float64Array, at = k0 - 1): void {
  const o0 = k0 * step, o1 = o0 + step, o2 = o1 + step, o3 = o2 + step;
  let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
  const end = len - o3; // a + o3 < len for every lag of the block below `end`
  let a = 0;
  for (; a < end; a++) {
    const v = x[a];
    s0 += v * x[a + o0];
    s1 += v * x[a + o1];
    s2 += v * x[a + o2];
    s3 += v * x[a + o3];
  }
  // The shorter lags go on where the longer ones stop.
  const from = a;
  for (a = from; a + o2 < len; a++) s2 += x[a] * x[a + o2];
  for (a = from; a + o1 < len; a++) s1 += x[a] * x[a + o1];
  for (a = from; a + o0 < len; a++) s0 += x[a] * x[a + o0];
  out[at] = s0;
  out[at + 1] = s1;
  out[at + 2] = s2;
  out[at + 3] = s3;
}

/** Lag sums s_k (see fourLagSums) for k = 1..maxLag into out[k - 1]. */
function lagSums(x: Float64Array, len: number, step: number, maxLag: number, out: Float64Array): void {
  let k = 1;
  for (; k + 3 <= maxLag; k += 4) fourLagSums(x, len, step, k, out);
  for (; k <= maxLag; k++) {
    const shift = k * step;
    let s = 0;
    for (let a = 0; a + shift < len; a++) s += x[a] * x[a + shift];
    out[k - 1] = s;
  }
}

/**
 * Biased sample autocorrelation r_1..r_maxLag of `x[0..n)` (mean removed). `out[k - 1]` receives r_k;
 * NaN when the series is constant or shorter than k + 1. Returns `out`.
 */
export function autocorrelation(x: ArrayLike<number>, n: number, maxLag: number, out = new Float64Array(maxLag)): Float64Array {
  let mean = 0;
  for (let t = 0; t < n; t++) mean += x[t];
  mean /= n;
  const d = takeFloat64(n);
  let c0 = 0;
  for (let t = 0; t < n; t++) { const v = x[t] - mean; d[t] = v; c0 += v * v; }
  if (c0 > 0) lagSums(d, n, 1, Math.min(maxLag, n - 1), out);
  giveBack(d);
  for (let k = 1; k <= maxLag; k++) {
    if (k >= n || !(c0 > 0)) { out[k - 1] = NaN; continue; }
    out[k - 1] = out[k - 1] / c0;
  }
  return out;
}

/** A portmanteau statistic with its chi-square degrees of freedom and upper-tail p-value. */
export interface PortmanteauResult {
  q: number;
  dof: number;
  p: number;
}

/**
 * A portmanteau Q over m lags referred to chi-square with m - fittedParams degrees of freedom: p is its upper tail,
 * NaN when no degree of freedom is left or Q is not finite.
 */
function portmanteau(q: number, m: number, fittedParams: number): PortmanteauResult {
  const dof = m - fittedParams;
  return { q, dof, p: dof > 0 && Number.isFinite(q) ? chi2Sf(q, dof) : NaN };
}

/**
 * Ljung-Box Q over lags 1..m from the autocorrelations `r` (r[k-1] = r_k) of a series of length n, with
 * m - fittedParams degrees of freedom (Ljung and Box 1978; NIST e-Handbook sec. 6.4.4.8.1).
 */
export function ljungBox(r: ArrayLike<number>, n: number, m: number, fittedParams = 0): PortmanteauResult {
  let s = 0;
  for (let k = 1; k <= m; k++) s += (r[k - 1] * r[k - 1]) / (n - k);
  return portmanteau(n * (n + 2) * s, m, fittedParams);
}

/** Box-Pierce Q = n sum_{k=1}^{m} r_k^2 with m - fittedParams degrees of freedom (Box and Pierce 1970). */
export function boxPierce(r: ArrayLike<number>, n: number, m: number, fittedParams = 0): PortmanteauResult {
  let s = 0;
  for (let k = 1; k <= m; k++) s += r[k - 1] * r[k - 1];
  return portmanteau(n * s, m, fittedParams);
}

/**
 * Prefix sums of the energies |nu(k)|^2 of K vectors of `dof` components (row-major): energy[k] sums the first k.
 * A scratch column of count + 1 values (scratch.ts): give it back once read.
 */
function energyPrefix(nu: ArrayLike<number>, dof: number, count: number): Float64Array {
  const energy = takeFloat64(count + 1);
  energy[0] = 0;
  for (let k = 0; k < count; k++) {
    let e = 0;
    for (let c = 0; c < dof; c++) e += nu[k * dof + c] * nu[k * dof + c];
    energy[k + 1] = energy[k] + e;
  }
  return energy;
}

/**
 * Bar-Shalom's time-average normalized autocorrelation rho(1..maxLag) of the vector sequence `nu` (K vectors of
 * `dof` components, row-major). `out[j - 1]` receives rho(j) (NaN when undefined). Not mean-removed, as defined.
 */
export function normalizedAutocorrelation(
  nu: ArrayLike<number>, dof: number, count: number, maxLag: number, out = new Float64Array(maxLag),
): Float64Array {
  // Energies |nu(k)|^2 and their prefix sums, so each lag costs one pass of dot products.
  const energy = energyPrefix(nu, dof, count);
  // Cross sums over the flat array (one lag is a shift of `dof` values).
  const usable = Math.max(0, Math.min(maxLag, count - 1));
  if (nu instanceof Float64Array) {
    lagSums(nu, count * dof, dof, usable, out);
  } else {
    for (let j = 1; j <= usable; j++) {
      let cross = 0;
      const end = (count - j) * dof;
      const shift = j * dof;
      for (let a = 0; a < end; a++) cross += nu[a] * nu[a + shift];
      out[j - 1] = cross;
    }
  }
  for (let j = 1; j <= maxLag; j++) {
    if (j >= count) { out[j - 1] = NaN; continue; }
    const head = energy[count - j];
    const tail = energy[count] - energy[j];
    const den = Math.sqrt(head * tail);
    out[j - 1] = den > 0 ? out[j - 1] / den : NaN;
  }
  giveBack(energy);
  return out;
}

/**
 * Two-sided standard normal quantile z with P(|Z| <= z) = confidence (1.959964 for 0.95), taken from the chi-square
 * quantile with 1 dof (Z^2 ~ chi-square(1)) so the project keeps one source of distribution numbers.
 */
export function twoSidedNormalQuantile(confidence: number): number {
  return Math.sqrt(chi2Quantile(confidence, 1));
}

/** Acceptance bound +-z/sqrt(pairs) of a normalized autocorrelation from `pairs` products (Bar-Shalom sec. 5.4). */
export function autocorrelationBound(confidence: number, pairs: number): number {
  return pairs > 0 ? twoSidedNormalQuantile(confidence) / Math.sqrt(pairs) : NaN;
}

/**
 * Segment bounds [0, ...breaks, n] as cuts: segment s is [cuts[s], cuts[s + 1]). `breaks` are the indices in (0, n)
 * where a new segment starts (sorted, unique; resets/segments.ts `segmentBreaks`).
 */
function segmentCuts(n: number, breaks: readonly number[]): number[] {
  const cuts = [0];
  for (const b of breaks) if (b > cuts[cuts.length - 1] && b < n) cuts.push(b);
  cuts.push(n);
  return cuts;
}

/**
 * Lag pairs within segments: `out[k - 1]` = sum over segments of max(0, n_s - k) for k = 1..maxLag (n - k for one
 * segment). Returns `out`.
 */
export function segmentPairs(n: number, breaks: readonly number[], maxLag: number, out = new Float64Array(maxLag)): Float64Array {
  const cuts = segmentCuts(n, breaks);
  for (let k = 1; k <= maxLag; k++) {
    let p = 0;
    for (let s = 0; s + 1 < cuts.length; s++) p += Math.max(0, cuts[s + 1] - cuts[s] - k);
    out[k - 1] = p;
  }
  return out;
}

/**
 * The pooled within-segment sample autocorrelation of `x[0..n)` split at `breaks` (filter restarts): each segment s
 * is centred on its own mean m_s and scaled to its own sample variance c_s / n_s (c_s = sum_{t in s} (x_t - m_s)^2),
 * and r_k = (1/n) sum_s (n_s / c_s) sum_{t, t+k in s} (x_t - m_s)(x_{t+k} - m_s): no product pairs values of two
 * segments, and a segment whose scale differs (S too large or too small after a restart) weighs as its length says.
 * With no breaks it is the value of `autocorrelation` (the lag sums of one segment are taken in the same order).
 * A constant segment adds no products. `out[k - 1]` receives r_k (NaN when no segment holds a pair at lag k, i.e.
 * k is at least the longest segment's length, or every segment is constant).
 */
export function segmentedAutocorrelation(
  x: ArrayLike<number>, n: number, breaks: readonly number[], maxLag: number, out = new Float64Array(maxLag),
): Float64Array {
  const cuts = segmentCuts(n, breaks);
  const d = takeFloat64(n);
  const part = new Float64Array(maxLag);
  out.fill(0, 0, maxLag);
  let varying = false;
  let longest = 0; // a lag k has a pair within some segment (segmentPairs > 0) exactly when k < longest
  for (let s = 0; s + 1 < cuts.length; s++) {
    const a = cuts[s], b = cuts[s + 1];
    longest = Math.max(longest, b - a);
    let mean = 0;
    for (let t = a; t < b; t++) mean += x[t];
    mean /= b - a;
    let c0 = 0;
    for (let t = a; t < b; t++) { const v = x[t] - mean; d[t] = v; c0 += v * v; }
    if (!(c0 > 0)) continue;
    varying = true;
    const usable = Math.min(maxLag, b - a - 1);
    if (usable < 1) continue;
    lagSums(d.subarray(a, b), b - a, 1, usable, part);
    // one segment: N_k / c exactly as `autocorrelation` divides; several: weighted by n_s / c_s, divided by n below
    const scale = (b - a) / c0;
    for (let k = 0; k < usable; k++) out[k] += cuts.length === 2 ? part[k] / c0 : part[k] * scale;
  }
  giveBack(d);
  for (let k = 1; k <= maxLag; k++) {
    if (k >= longest || !varying) { out[k - 1] = NaN; continue; }
    if (cuts.length > 2) out[k - 1] /= n;
  }
  return out;
}

/**
 * Ljung-Box Q of a series split into segments, from its pooled within-segment autocorrelations `r` (r[k-1] = r_k,
 * `segmentedAutocorrelation`): Q = n (n + 2) sum_{k=1}^{m} r_k^2 / P_k with P_k the lag-k pairs within segments
 * (`segmentPairs`), since Var(r_k) is about P_k / (n (n + 2)) under whiteness as (n - k) / (n (n + 2)) is for
 * one segment (Ljung and Box 1978). m - fittedParams degrees of freedom. With P_k = n - k it is `ljungBox`.
 */
export function segmentedLjungBox(
  r: ArrayLike<number>, n: number, pairs: ArrayLike<number>, m: number, fittedParams = 0,
): PortmanteauResult {
  let s = 0;
  for (let k = 1; k <= m; k++) s += (r[k - 1] * r[k - 1]) / pairs[k - 1];
  return portmanteau(n * (n + 2) * s, m, fittedParams);
}

/**
 * `normalizedAutocorrelation` with products taken within segments only (split at `breaks`): rho(j) sums
 * nu(k)^T nu(k+j) over the pairs of a segment and normalises by the energies of those pairs' first and second
 * members. With no breaks it is the value of `normalizedAutocorrelation`.
 */
export function segmentedNormalizedAutocorrelation(
  nu: Float64Array, dof: number, count: number, breaks: readonly number[], maxLag: number, out = new Float64Array(maxLag),
): Float64Array {
  const cuts = segmentCuts(count, breaks);
  const energy = energyPrefix(nu, dof, count);
  const part = new Float64Array(maxLag);
  out.fill(0, 0, maxLag);
  for (let s = 0; s + 1 < cuts.length; s++) {
    const a = cuts[s], b = cuts[s + 1];
    const usable = Math.min(maxLag, b - a - 1);
    if (usable < 1) continue;
    lagSums(nu.subarray(a * dof, b * dof), (b - a) * dof, dof, usable, part);
    for (let j = 0; j < usable; j++) out[j] += part[j];
  }
  for (let j = 1; j <= maxLag; j++) {
    let head = 0, tail = 0;
    for (let s = 0; s + 1 < cuts.length; s++) {
      const a = cuts[s], b = cuts[s + 1];
      if (b - a <= j) continue;
      head += energy[b - j] - energy[a];
      tail += energy[b] - energy[a + j];
    }
    const den = Math.sqrt(head * tail);
    out[j - 1] = den > 0 ? out[j - 1] / den : NaN;
  }
  giveBack(energy);
  return out;
}

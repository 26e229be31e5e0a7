/**
 * Allan deviation of rate-like ("frequency") data: gyro rate, specific force, or any plain series such as a static
 * range. Overlapping (OADEV) and non-overlapping (ADEV) estimators, with error bars from equivalent degrees of freedom.
 *
 * Conventions (stated once, here):
 * - Input `y` is uniformly sampled at `tau0_s`; tau = m * tau0_s with integer averaging factor m.
 * - Phase (angle) is x_k = tau0 * sum_{j<k} y_j, k = 0..n, so N = n + 1 phase points (reference-checks.md sec. 3.2).
 * - Overlapping: sigma^2(tau) = sum_{i=0}^{N-2m-1} (x_{i+2m} - 2 x_{i+m} + x_i)^2 / (2 tau^2 (N - 2m)).
 * - Non-overlapping: average blocks of m samples, M = floor(n/m) blocks,
 *   sigma^2(tau) = sum_k (ybar_{k+1} - ybar_k)^2 / (2 (M - 1)).
 *   Both forms are those of W. J. Riley, NIST SP 1065 (2008), as transcribed in reference-checks.md sec. 3.2.
 * - Error bars: a two-sided chi-square interval with the equivalent degrees of freedom (EDF) of the estimate,
 *   lo = sigma sqrt(edf / chi2_{1-a/2}(edf)), hi = sigma sqrt(edf / chi2_{a/2}(edf)). The default confidence is
 *   0.683 (1-sigma bars, the usual choice for Allan plots: common practice).
 *
 * Hand-written: no Allan-variance package exists on npm (reference-checks.md sec. 8), and an O(n)-per-tau form is
 * needed for 10^7 samples. The block sums are cumulative sums evaluated by a sliding recurrence (sum over a window =
 * difference of two cumulative sums, updated by one sample at each end), on samples with their least-squares line
 * removed and its exact contribution added back, so no n-sized scratch array is needed.
 */
import { chi2Quantile } from '../stats/chi2';

/** Power-law noise type used to pick the EDF formula (alpha of S_y(f) ~ f^alpha). */
export type PowerLawNoise = 'whitePM' | 'flickerPM' | 'whiteFM' | 'flickerFM' | 'randomWalkFM';

/** An Allan deviation curve. Arrays are parallel, one entry per averaging time. */
export interface AllanCurve {
  /** Averaging times, seconds (ascending). */
  tau_s: Float64Array;
  /** Allan deviation, in the unit of the input. */
  adev: Float64Array;
  /** Lower and upper ends of the error bar (confidence `confidence`). */
  lo: Float64Array;
  hi: Float64Array;
  /** Averaging factors m (tau = m tau0). */
  m: Float64Array;
  /** Number of squared differences averaged. */
  terms: Float64Array;
  /** Equivalent degrees of freedom of each point. */
  edf: Float64Array;
  /** Noise type assumed for the EDF of each point (from the local slope of the curve). */
  noise: PowerLawNoise[];
  /** Sample interval, seconds. */
  tau0_s: number;
  /** Samples used (finite values). */
  samples: number;
  /** Non-finite samples removed before the computation. */
  dropped: number;
  /** True for the overlapping estimator. */
  overlapping: boolean;
  /** Confidence of lo/hi. */
  confidence: number;
}

/** Options of the Allan deviation estimators. */
export interface AllanOptions {
  /** Confidence of the error bars (0.683). */
  confidence?: number;
  /** Averaging factors per octave when `taus` is not given (1: m = 1, 2, 4, ...). */
  perOctave?: number;
  /** Largest averaging factor as a fraction of the sample count when `taus` is not given (0.5). */
  maxFraction?: number;
}

/**
 * Log-spaced averaging factors: round(2^(k/perOctave)) for k = 0, 1, ..., unique, up to `mMax`.
 * @param mMax largest factor allowed
 * @param perOctave points per octave (1 = octaves)
 */
export function octaveFactors(mMax: number, perOctave = 1): number[] {
  const out: number[] = [];
  const step = 1 / Math.max(1, Math.floor(perOctave));
  for (let k = 0; ; k++) {
    const m = Math.round(Math.pow(2, k * step));
    if (m > mMax) break;
    if (out.length === 0 || out[out.length - 1] !== m) out.push(m);
    if (k > 4096) break;
  }
  return out;
}

/**
 * The samples prepared for the sums: non-finite values removed (a copy only when there are some), and the
 * least-squares line a + b k of the samples against their index. The second differences are computed on
 * y'_k = y_k - a - b k and the line's exact contribution b m^2 is added back (a line in y adds exactly b m^2 to every
 * difference of adjacent block sums), so a large offset or rate ramp costs no precision.
 */
function prepare(y: ArrayLike<number>): { v: Float64Array; n: number; dropped: number; a: number; b: number } {
  let n = 0;
  let sum = 0;
  for (let i = 0; i < y.length; i++) {
    const x = y[i];
    if (x - x === 0) { n++; sum += x; } // finite (NaN - NaN and inf - inf are NaN)
  }
  let v: Float64Array;
  if (n === y.length && y instanceof Float64Array) v = y;
  else {
    const c = new Float64Array(n);
    let k = 0;
    for (let i = 0; i < y.length; i++) { const x = y[i]; if (x - x === 0) c[k++] = x; }
    v = c;
  }
  const mean = n > 0 ? sum / n : 0;
  // slope against the centred index: b = sum (k - kbar)(y_k - ybar) / sum (k - kbar)^2
  const kbar = (n - 1) / 2;
  let sxy = 0;
  for (let k = 0; k < n; k++) sxy += (k - kbar) * (v[k] - mean);
  const sxx = n > 1 ? (n * (n * n - 1)) / 12 : 0;
  const b = sxx > 0 ? sxy / sxx : 0;
  return { v, n, dropped: y.length - n, a: mean - b * kbar, b };
}

/** Difference of adjacent block sums of m de-trended samples starting at s, computed directly (O(m)). */
function blockDifference(v: Float64Array, a: number, b: number, s: number, m: number): number {
  let d = 0;
  for (let j = s; j < s + m; j++) d += (v[j + m] - a - b * (j + m)) - (v[j] - a - b * j);
  return d;
}

/** Continue one sliding chain over i in [from, to) starting from its difference d at `from`; returns the sum of squares. */
function slideChain(v: Float64Array, m: number, from: number, to: number, d0: number, trend: number): number {
  let d = d0;
  let total = 0;
  for (let i = from; i < to; i++) {
    const e = d + trend;
    total += e * e;
    const c = v[i + m];
    d += (v[i + 2 * m] - c) - (c - v[i]);
  }
  return total;
}

/**
 * Sum over i = 0..count-1 (stride `step`) of d_i^2, where d_i = (sum of y over [i+m, i+2m)) - (sum over [i, i+m)),
 * the phase second difference in units of y * tau0. Block sums slide by a recurrence on the de-trended samples
 * (O(n) per m, no n-sized scratch array: allocating and touching one costs more than the sums on this machine).
 * The overlapping sum runs four independent chains over four quarters of the range, interleaved, so that the
 * additions do not wait on each other (each chain starts from a directly computed difference).
 */
function sumSquaredDifferences(p: { v: Float64Array; a: number; b: number }, m: number, count: number, step: number): number {
  const { v, a, b } = p;
  const trend = b * m * m;
  if (step !== 1) {
    // non-overlapping: each block pair directly (n/m pairs of m samples: O(n) in all)
    let total = 0;
    for (let i = 0; i < count; i++) {
      const e = blockDifference(v, a, b, i * step, m) + trend;
      total += e * e;
    }
    return total;
  }
  const L = Math.ceil(count / 4);
  if (count < 64 || L < m) return slideChain(v, m, 0, count, blockDifference(v, a, b, 0, m), trend);
  // d_{i+1} = d_i + (y_{i+2m} - y_{i+m}) - (y_{i+m} - y_i): the line cancels exactly in this combination, and
  // differencing neighbours first keeps the rounding relative to the local change, not to the offset
  const s1 = L;
  const s2 = 2 * L;
  const s3 = 3 * L;
  let d0 = blockDifference(v, a, b, 0, m);
  let d1 = blockDifference(v, a, b, s1, m);
  let d2 = blockDifference(v, a, b, s2, m);
  let d3 = blockDifference(v, a, b, s3, m);
  let t0 = 0;
  let t1 = 0;
  let t2 = 0;
  let t3 = 0;
  const last = count - s3; // the last quarter may be shorter
  for (let k = 0; k < last; k++) {
    const e0 = d0 + trend; t0 += e0 * e0;
    const e1 = d1 + trend; t1 += e1 * e1;
    const e2 = d2 + trend; t2 += e2 * e2;
    const e3 = d3 + trend; t3 += e3 * e3;
    let i = k;
    let c = v[i + m];
    d0 += (v[i + 2 * m] - c) - (c - v[i]);
    i = k + s1; c = v[i + m];
    d1 += (v[i + 2 * m] - c) - (c - v[i]);
    i = k + s2; c = v[i + m];
    d2 += (v[i + 2 * m] - c) - (c - v[i]);
    i = k + s3; c = v[i + m];
    d3 += (v[i + 2 * m] - c) - (c - v[i]);
  }
  // finish the first three quarters (each L long)
  t0 += slideChain(v, m, last, L, d0, trend);
  t1 += slideChain(v, m, s1 + last, s2, d1, trend);
  t2 += slideChain(v, m, s2 + last, s3, d2, trend);
  return t0 + t1 + t2 + t3;
}

/** Factors from requested taus (seconds), rounded to the nearest integer m >= 1, unique and ascending, within [1, mMax]. */
function factorsFromTaus(taus: readonly number[], tau0_s: number, mMax: number): number[] {
  const set = new Set<number>();
  for (const tau of taus) {
    if (!(tau > 0) || !Number.isFinite(tau)) continue;
    const m = Math.max(1, Math.round(tau / tau0_s));
    if (m <= mMax) set.add(m);
  }
  return [...set].sort((a, b) => a - b);
}

/**
 * Overlapping Allan deviation of rate-like data through cumulative sums, O(n) per averaging time.
 * Non-finite samples are removed (counted in `dropped`); the series is otherwise taken as uniformly sampled.
 * @param y the rate-like series (gyro rate, specific force, or a plain series such as a static range)
 * @param tau0_s the sample interval, seconds
 * @param taus averaging times, seconds (rounded to multiples of tau0); default octaves up to half the length
 * @param options confidence of the error bars, points per octave
 */
export function allanDeviation(y: ArrayLike<number>, tau0_s: number, taus?: readonly number[], options: AllanOptions = {}): AllanCurve {
  const p = prepare(y);
  const { n, dropped } = p;
  const N = n + 1; // phase points
  const mMax = Math.floor((N - 1) / 2);
  const limit = Math.max(1, Math.floor(n * (options.maxFraction ?? 0.5)));
  const factors = taus ? factorsFromTaus(taus, tau0_s, mMax) : octaveFactors(Math.min(mMax, limit), options.perOctave ?? 1);
  const adev = new Float64Array(factors.length);
  const terms = new Float64Array(factors.length);
  for (let f = 0; f < factors.length; f++) {
    const m = factors[f];
    const count = N - 2 * m;
    // x = tau0 * cumsum(y), tau = m tau0: tau0^2 cancels, sigma^2 = sum d^2 / (2 m^2 (N - 2m))
    adev[f] = Math.sqrt(sumSquaredDifferences(p, m, count, 1) / (2 * m * m * count));
    terms[f] = count;
  }
  return finishCurve(adev, factors, terms, N, tau0_s, n, dropped, true, options.confidence ?? 0.683);
}

/**
 * Non-overlapping Allan deviation of rate-like data (blocks of m samples, adjacent block means differenced).
 * Used for the NBS reference checks and where the classic estimator is asked for.
 * @param y the rate-like series
 * @param tau0_s the sample interval, seconds
 * @param taus averaging times, seconds; default octaves up to a third of the length
 * @param options confidence of the error bars, points per octave
 */
export function allanDeviationNonOverlapping(y: ArrayLike<number>, tau0_s: number, taus?: readonly number[], options: AllanOptions = {}): AllanCurve {
  const p = prepare(y);
  const { n, dropped } = p;
  const mMax = Math.floor(n / 2); // at least two blocks
  const factors = taus ? factorsFromTaus(taus, tau0_s, mMax) : octaveFactors(Math.min(mMax, Math.max(1, Math.floor(n / 3))), options.perOctave ?? 1);
  const adev = new Float64Array(factors.length);
  const terms = new Float64Array(factors.length);
  for (let f = 0; f < factors.length; f++) {
    const m = factors[f];
    const M = Math.floor(n / m);
    // block means: (ybar_{k+1} - ybar_k) = d / m, sigma^2 = sum (d/m)^2 / (2 (M - 1))
    adev[f] = Math.sqrt(sumSquaredDifferences(p, m, M - 1, m) / (m * m * 2 * (M - 1)));
    terms[f] = M - 1;
  }
  return finishCurve(adev, factors, terms, n + 1, tau0_s, n, dropped, false, options.confidence ?? 0.683);
}

/** Local log-log slope of a curve at each point (central difference, one-sided at the ends; NaN for a single point). */
export function localSlopes(tau_s: ArrayLike<number>, adev: ArrayLike<number>): Float64Array {
  const k = tau_s.length;
  const out = new Float64Array(k).fill(NaN);
  for (let i = 0; i < k; i++) {
    const a = Math.max(0, i - 1);
    const b = Math.min(k - 1, i + 1);
    if (a === b) continue;
    const s = (Math.log(adev[b]) - Math.log(adev[a])) / (Math.log(tau_s[b]) - Math.log(tau_s[a]));
    out[i] = Number.isFinite(s) ? s : NaN;
  }
  return out;
}

/**
 * Noise type from the local ADEV slope mu/2 (sigma ~ tau^(mu/2)): slope near -1 white (or flicker) PM, -1/2 white FM,
 * 0 flicker FM, +1/2 random-walk FM (the power-law correspondence of Riley, NIST SP 1065 sec. 5.2; from memory).
 * Boundaries halfway between the nominal slopes.
 */
export function noiseFromSlope(slope: number): PowerLawNoise {
  if (!Number.isFinite(slope)) return 'whiteFM';
  if (slope <= -0.75) return 'whitePM';
  if (slope <= -0.25) return 'whiteFM';
  if (slope < 0.25) return 'flickerFM';
  return 'randomWalkFM';
}

/**
 * Equivalent degrees of freedom of an overlapping Allan variance, the simple approximations tabulated in W. J. Riley,
 * NIST SP 1065 (2008) Table 5 (after S. Stein 1985). Written from memory, then checked against a public transcription
 * of that table (the `edf_simple` function of the allantools library); they agree except flicker FM at m = 1, where
 * the transcription lacks the square. The squared form is kept: it grows with N, as an EDF must.
 * - white PM:   (N+1)(N-2m) / (2(N-m))
 * - flicker PM: exp( sqrt( ln((N-1)/(2m)) ln((2m+1)(N-1)/4) ) )
 * - white FM:   (3(N-1)/(2m) - 2(N-2)/N) * 4m^2/(4m^2+5)
 * - flicker FM: m = 1: 2(N-2)^2/(2.3N-4.9); m >= 2: 5N^2/(4m(N+3m))
 * - RW FM:      ((N-2)/m) ((N-1)^2 - 3m(N-1) + 4m^2)/(N-3)^2
 * with N phase points and averaging factor m. For the non-overlapping estimator the count of differences is used
 * (chi-square with M-1 dof, the white-FM case; conservative for the others). The result is kept at least 1.
 */
export function allanEdf(N: number, m: number, noise: PowerLawNoise, overlapping = true): number {
  if (!overlapping) return Math.max(1, Math.floor((N - 1) / m) - 1);
  let edf: number;
  switch (noise) {
    case 'whitePM':
      edf = ((N + 1) * (N - 2 * m)) / (2 * (N - m));
      break;
    case 'flickerPM': {
      const a = Math.log((N - 1) / (2 * m));
      const b = Math.log(((2 * m + 1) * (N - 1)) / 4);
      edf = a > 0 && b > 0 ? Math.exp(Math.sqrt(a * b)) : 1;
      break;
    }
    case 'whiteFM':
      edf = ((3 * (N - 1)) / (2 * m) - (2 * (N - 2)) / N) * ((4 * m * m) / (4 * m * m + 5));
      break;
    case 'flickerFM':
      edf = m === 1 ? (2 * (N - 2) * (N - 2)) / (2.3 * N - 4.9) : (5 * N * N) / (4 * m * (N + 3 * m));
      break;
    case 'randomWalkFM':
      edf = ((N - 2) / m) * (((N - 1) * (N - 1) - 3 * m * (N - 1) + 4 * m * m) / ((N - 3) * (N - 3)));
      break;
  }
  return Number.isFinite(edf) && edf > 1 ? edf : 1;
}

/** Assemble the curve: taus, noise types from local slopes, EDF and chi-square error bars. */
function finishCurve(
  adev: Float64Array, factors: number[], terms: Float64Array, N: number, tau0_s: number, n: number, dropped: number,
  overlapping: boolean, confidence: number,
): AllanCurve {
  const k = factors.length;
  const tau_s = new Float64Array(k);
  const m = new Float64Array(k);
  for (let i = 0; i < k; i++) { m[i] = factors[i]; tau_s[i] = factors[i] * tau0_s; }
  const slopes = localSlopes(tau_s, adev);
  const noise: PowerLawNoise[] = [];
  const edf = new Float64Array(k);
  const lo = new Float64Array(k);
  const hi = new Float64Array(k);
  const a = (1 - confidence) / 2;
  for (let i = 0; i < k; i++) {
    const kind = noiseFromSlope(slopes[i]);
    noise.push(kind);
    const e = allanEdf(N, factors[i], kind, overlapping);
    edf[i] = e;
    const qHi = chi2Quantile(1 - a, e);
    const qLo = chi2Quantile(a, e);
    lo[i] = adev[i] * Math.sqrt(e / qHi);
    hi[i] = qLo > 0 ? adev[i] * Math.sqrt(e / qLo) : NaN;
  }
  return { tau_s, adev, lo, hi, m, terms, edf, noise, tau0_s, samples: n, dropped, overlapping, confidence };
}

/**
 * The NIS distribution against chi-square(dof): a histogram with the expected density per bin, and a
 * Kolmogorov-Smirnov test.
 *
 * The KS test uses at most KS_MAX_SAMPLES values taken at an even stride through the log: on hundreds of thousands
 * of updates it would reject every real filter for modelling differences too small to matter, the stride also thins
 * out short-range correlation, and the cost stays bounded (one chi-square CDF per sampled value).
 */
import { chi2Cdf, chi2Quantile } from '../stats/chi2';
import { ksTest, type KsResult } from '../stats/ks';

/** Most values the KS test uses. */
export const KS_MAX_SAMPLES = 5000;
/** Number of histogram bins over [0, chi2 quantile 0.999]. */
export const HISTOGRAM_BINS = 30;

/** Histogram of NIS values with the chi-square(dof) expectation. */
export interface NisHistogram {
  /** Bin edges, length bins + 1, from 0 to the 99.9% quantile. */
  edges: number[];
  counts: number[];
  /** Empirical density count / (n * width). */
  density: number[];
  /** Chi-square density averaged over each bin: (F(b) - F(a)) / width. */
  pdf: number[];
  /** Values beyond the last edge. */
  overflow: number;
  /** Values counted. */
  n: number;
}

/** Histogram of the finite `nis[0..n)` against chi-square(dof). Undefined when n = 0. */
export function nisHistogram(nis: Float64Array, n: number, dof: number, bins = HISTOGRAM_BINS): NisHistogram | undefined {
  if (n === 0) return undefined;
  const width = histogramBinWidth(dof, bins);
  const counts = new Float64Array(bins);
  let overflow = 0;
  for (let i = 0; i < n; i++) {
    const b = Math.floor(nis[i] / width);
    if (b >= bins) overflow++;
    else if (b >= 0) counts[b]++;
  }
  return nisHistogramFromCounts(counts, overflow, n, dof, width);
}

/** Width of the histogram's bins: the chi-square(dof) 99.9% quantile over `bins`. */
export function histogramBinWidth(dof: number, bins = HISTOGRAM_BINS): number {
  return chi2Quantile(0.999, dof) / bins;
}

/**
 * The histogram from counts a caller gathered itself (bin floor(nis / width) for each of n values; `overflow` beyond
 * the last bin), the same as {@link nisHistogram} gives for those values. Undefined when n = 0.
 */
export function nisHistogramFromCounts(
  binCounts: Float64Array, overflow: number, n: number, dof: number, width: number,
): NisHistogram | undefined {
  if (n === 0) return undefined;
  const bins = binCounts.length;
  const counts = Array.from(binCounts);
  const edges = Array.from({ length: bins + 1 }, (_, k) => k * width);
  const density = counts.map((c) => c / (n * width));
  const cdfAt = edges.map((e) => chi2Cdf(e, dof)); // each edge once (it bounds two bins)
  const pdf = counts.map((_, k) => (cdfAt[k + 1] - cdfAt[k]) / width);
  return { edges, counts, density, pdf, overflow, n };
}

/**
 * KS test of the finite `nis[0..n)` against chi-square(dof) on at most KS_MAX_SAMPLES evenly strided values. With
 * `index`, the values are nis[index[0..n)] (a compacted selection without a copy of its own).
 */
export function nisKsTest(nis: Float64Array, n: number, dof: number, index?: Int32Array): (KsResult & { stride: number }) | undefined {
  const stride = Math.max(1, Math.ceil(n / KS_MAX_SAMPLES));
  const sample = new Float64Array(Math.ceil(n / stride));
  let k = 0;
  for (let i = 0; i < n; i += stride) sample[k++] = index ? nis[index[i]] : nis[i];
  const r = ksTest(sample.subarray(0, k), (x) => chi2Cdf(x, dof));
  return r ? { ...r, stride } : undefined;
}

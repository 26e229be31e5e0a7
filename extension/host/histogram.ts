/**
 * Histograms of NIS series against the chi-square density of their degrees of freedom (the "is the NIS
 * chi-square?" view). Pure; the expected counts come from core/stats/chi2.ts, never re-derived here.
 */
import { chi2Cdf, chi2Quantile } from '../core/stats/chi2';
import type { HistogramInfo } from '../protocol';

/**
 * Histogram of the finite, non-negative values of `values` (first `length`) in `bins` equal bins over
 * [0, chi2Quantile(upper, dof)], with the expected count per bin under chi-square(dof) for the same total.
 * Values beyond the last edge are counted in `overflow` (the expected overflow is total * (1 - upper)).
 */
export function nisHistogram(key: string, values: Float64Array, dof: number, bins = 30, upper = 0.995, length = values.length): HistogramInfo {
  const top = chi2Quantile(upper, dof);
  const width = top / bins;
  const edges = Array.from({ length: bins + 1 }, (_, i) => i * width);
  const counts = new Array<number>(bins).fill(0);
  let overflow = 0;
  let total = 0;
  for (let i = 0; i < length; i++) {
    const v = values[i];
    if (!Number.isFinite(v) || v < 0) continue;
    total++;
    if (v >= top) overflow++;
    else counts[Math.min(bins - 1, Math.floor(v / width))]++;
  }
  const expected = counts.map((_, i) => total * (chi2Cdf(edges[i + 1], dof) - chi2Cdf(edges[i], dof)));
  return { key, dof, edges, counts, expected, overflow, total };
}

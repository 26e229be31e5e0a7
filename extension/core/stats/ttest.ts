/**
 * One-sample Student t-test of a zero mean, with the t distribution from @stdlib (no hand-written incomplete beta).
 */
import tCdf from '@stdlib/stats-base-dists-t-cdf';

/** Result of a one-sample t-test of H0: mean = 0. */
export interface TTestResult {
  t: number;
  /** Degrees of freedom, n - 1. */
  dof: number;
  /** Two-sided p-value. */
  p: number;
}

/**
 * Two-sided one-sample t-test of a zero mean from the sample mean, the sample standard deviation (n - 1 divisor)
 * and the count. Undefined when n < 2 or the standard deviation is not positive.
 */
export function oneSampleTTest(mean: number, std: number, n: number): TTestResult | undefined {
  if (!(n >= 2) || !(std > 0) || !Number.isFinite(mean)) return undefined;
  const t = mean / (std / Math.sqrt(n));
  const dof = n - 1;
  // 2 * P(T <= -|t|): the lower tail keeps precision for large |t|.
  const p = Math.min(1, 2 * tCdf(-Math.abs(t), dof));
  return { t, dof, p };
}

/**
 * Chi-square quantiles and tail probabilities, from @stdlib (maintained, accurate to full double precision),
 * never from a hand-written approximation. The one place the project gets chi-square numbers from.
 */
import chisquareQuantile from '@stdlib/stats-base-dists-chisquare-quantile';
import chisquareCdf from '@stdlib/stats-base-dists-chisquare-cdf';
import gammainc from '@stdlib/math-base-special-gammainc';

/** Quantile: the value x with P(X <= x) = p for X ~ chi-square(dof). */
export function chi2Quantile(p: number, dof: number): number {
  return chisquareQuantile(p, dof);
}

/** Lower-tail probability P(X <= x) for X ~ chi-square(dof). */
export function chi2Cdf(x: number, dof: number): number {
  return chisquareCdf(x, dof);
}

/**
 * Upper-tail probability P(X > x) for X ~ chi-square(dof), computed directly as the regularized upper incomplete
 * gamma function Q(dof/2, x/2) so that tiny tails (1e-33) keep their precision instead of rounding 1 - cdf to 0.
 */
export function chi2Sf(x: number, dof: number): number {
  if (!(x > 0)) return 1;
  return gammainc(x / 2, dof / 2, true, true);
}

/** Two-sided interval [q((1-c)/2), q((1+c)/2)] of chi-square(dof), e.g. c = 0.95. */
export function chi2Interval(confidence: number, dof: number): [number, number] {
  return [chi2IntervalLower(confidence, dof), chi2IntervalUpper(confidence, dof)];
}

/** The lower end of {@link chi2Interval} alone (the same value), for a caller that needs one side. */
export function chi2IntervalLower(confidence: number, dof: number): number {
  return chisquareQuantile((1 - confidence) / 2, dof);
}

/** The upper end of {@link chi2Interval} alone (the same value), for a caller that needs one side. */
export function chi2IntervalUpper(confidence: number, dof: number): number {
  return chisquareQuantile(1 - (1 - confidence) / 2, dof);
}

/**
 * Two-sided interval of the average of K independent chi-square(dof) values: chi2(K*dof)/K
 * (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4, time-average NIS and N-run average NEES).
 */
export function chi2MeanInterval(confidence: number, dof: number, count: number): [number, number] {
  const [lo, hi] = chi2Interval(confidence, dof * count);
  return [lo / count, hi / count];
}

/**
 * Which anchor is lying: the blame rule and the per-anchor constant offsets.
 *
 * Links: a TDOA pair (i, j) or a two-way range to one anchor (j = -1). Each link has n measurements of which k are
 * anomalies (NIS beyond the gate or rejected by the estimator; for raw measurements, residuals beyond the gate on a
 * robust scale).
 *
 * Outlier rule:
 * 1. Baseline anomaly rate b = max(1 - gate, lower quartile of the link rates): at least a quarter of the links
 *    are assumed healthy (a median would let one bad anchor of a 4-anchor mesh, which is in half the pairs, raise
 *    the baseline to half its own rate and hide).
 * 2. A link is bad when its count is both significant and large: P(X >= k) < alpha / (number of links) for
 *    X ~ Poisson(n b) (Poisson tail from the chi-square helpers: P(X >= k) = chi2Cdf(2 n b, 2 k); the Poisson tail is
 *    heavier than the binomial one, so the test is conservative), k >= 3, and the rate k / n is at least 3 b and
 *    at least one percentage point above b ({@link MIN_EXCESS_RATE}): a statistically clear but tiny excess (0.8%
 *    against 0.3% on heavy-tailed real ranges) is not called a lying anchor.
 * 3. A bad pair implicates both its anchors, a bad range link its anchor. Greedy explanation: the anchor with the
 *    largest score (bad links it takes part in)^2 / (links it takes part in) is blamed, the bad links through it
 *    are explained, and the step repeats while unexplained bad links remain. The score prefers the anchor common to
 *    bad links on several pairs, and, between two anchors of one bad pair, the one whose other pairs are bad too
 *    (a reference anchor whose other pairs are clean is not blamed for one pair). When the two anchors of a bad
 *    pair tie exactly, both are marked suspect and the reason says the data cannot separate them.
 *
 * Offset rule: link means m_L = b_j - b_i (pair) or m_L = b_a (range) with standard errors s_L give per-anchor
 * offsets b by weighted least squares. TDOA alone cannot see an offset common to all anchors: the offsets are
 * then solved in the zero-sum gauge and shifted so that the median anchor has offset 0 (most anchors are taken
 * to be right); `sigma` is that of the zero-sum solution. An anchor is biased when |b| > z sigma, with z the
 * two-sided normal point of the gate (sqrt of the chi-square(1) quantile), and |b| exceeds half the typical
 * robust spread of the links (an offset well inside the noise is not called a fault).
 */
import { choleskyFactor, choleskySolve } from '../linalg/cholesky';
import { chi2Cdf, chi2Quantile } from '../stats/chi2';

/** Least excess of a bad link's anomaly rate over the baseline (one percentage point). */
export const MIN_EXCESS_RATE = 0.01;

/** Anomaly counts of one link. */
export interface LinkEvidence {
  /** First anchor (the range anchor, or i of pair i-j). */
  a: number;
  /** Second anchor (j of pair i-j), or -1 for a range link. */
  b: number;
  /** Measurements (or updates) considered. */
  n: number;
  /** Anomalies among them. */
  anomalies: number;
}

/** Result of {@link blameAnchors}. */
export interface BlameResult {
  /** Baseline anomaly rate used. */
  baselineRate: number;
  /** Per link: bad (significant excess of anomalies). */
  bad: boolean[];
  /** Per link: tail probability of its anomaly count under the baseline. */
  p: number[];
  /** Blamed anchors with the bad links they explain; `tiedWith` when a bad pair could not be split. */
  blamed: Map<number, { links: number[]; linksOfAnchor: number; tiedWith?: number }>;
}

/** Lower quartile of ascending values (linear interpolation between order statistics, common practice); 0 when empty. */
function lowerQuartile(sorted: readonly number[]): number {
  if (sorted.length === 0) return 0;
  const h = 0.25 * (sorted.length - 1);
  const lo = Math.floor(h);
  const hi = Math.min(sorted.length - 1, lo + 1);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/** Upper tail P(X >= k) for X ~ Poisson(lambda), via the chi-square cdf (exact identity). */
export function poissonUpperTail(k: number, lambda: number): number {
  if (k <= 0) return 1;
  if (!(lambda > 0)) return 0;
  return chi2Cdf(2 * lambda, 2 * k);
}

/**
 * The outlier blame rule (see the file comment). `gate` is the single-update chi-square probability (0.999),
 * `alpha` the family-wise false-finding probability (0.01).
 */
export function blameAnchors(links: readonly LinkEvidence[], gate: number, alpha: number): BlameResult {
  const rates = links.filter((l) => l.n > 0).map((l) => l.anomalies / l.n).sort((x, y) => x - y);
  const baselineRate = Math.max(1 - gate, lowerQuartile(rates));
  const perLinkAlpha = alpha / Math.max(1, links.length);
  const p = links.map((l) => poissonUpperTail(l.anomalies, l.n * baselineRate));
  const bad = links.map((l, k) => {
    if (l.n === 0 || l.anomalies < 3 || !(p[k] < perLinkAlpha)) return false;
    const rate = l.anomalies / l.n;
    return rate >= 3 * baselineRate && rate - baselineRate >= MIN_EXCESS_RATE;
  });

  const linksOf = new Map<number, number[]>();
  links.forEach((l, k) => {
    for (const a of l.b >= 0 ? [l.a, l.b] : [l.a]) {
      if (!linksOf.has(a)) linksOf.set(a, []);
      linksOf.get(a)!.push(k);
    }
  });
  const explained = links.map(() => false);
  const blamed: BlameResult['blamed'] = new Map();
  for (;;) {
    let best = -1;
    let bestScore = 0;
    let bestBad: number[] = [];
    let tie = -1;
    const anchorsSorted = [...linksOf.keys()].sort((x, y) => x - y);
    for (const a of anchorsSorted) {
      if (blamed.has(a)) continue;
      const mine = linksOf.get(a)!;
      const badMine = mine.filter((k) => bad[k] && !explained[k]);
      if (badMine.length === 0) continue;
      const allBad = mine.filter((k) => bad[k]).length;
      const score = (badMine.length * allBad) / mine.length;
      if (score > bestScore * (1 + 1e-9)) {
        best = a;
        bestScore = score;
        bestBad = badMine;
        tie = -1;
      } else if (Math.abs(score - bestScore) <= 1e-9 * bestScore && badMine.length === 1 && bestBad.length === 1 && badMine[0] === bestBad[0]) {
        tie = a;
      }
    }
    if (best < 0) break;
    for (const k of bestBad) explained[k] = true;
    blamed.set(best, { links: bestBad, linksOfAnchor: linksOf.get(best)!.length, ...(tie >= 0 ? { tiedWith: tie } : {}) });
    if (tie >= 0) blamed.set(tie, { links: bestBad, linksOfAnchor: linksOf.get(tie)!.length, tiedWith: best });
  }
  return { baselineRate, bad, p, blamed };
}

/** Mean of one link with its standard error, for {@link estimateOffsets}. */
export interface LinkMean {
  a: number;
  /** -1 for a range link. */
  b: number;
  mean: number;
  sigma: number;
}

/** Per-anchor offsets and their 1-sigma (NaN for an anchor no link constrains). */
export interface Offsets {
  value: Float64Array;
  sigma: Float64Array;
  /** True when only differences were seen (TDOA): values are relative, the median anchor being 0. */
  relative: boolean;
}

/**
 * Weighted least-squares per-anchor offsets from link means (see the file comment). `nAnchors` sizes the output;
 * anchors without any usable link get NaN.
 */
export function estimateOffsets(links: readonly LinkMean[], nAnchors: number): Offsets {
  const value = new Float64Array(nAnchors).fill(NaN);
  const sigma = new Float64Array(nAnchors).fill(NaN);
  const usable = links.filter((l) => Number.isFinite(l.mean) && l.sigma > 0 && Number.isFinite(l.sigma));
  const involved = new Set<number>();
  for (const l of usable) {
    involved.add(l.a);
    if (l.b >= 0) involved.add(l.b);
  }
  const ids = [...involved].sort((x, y) => x - y);
  const n = ids.length;
  const relative = usable.length > 0 && usable.every((l) => l.b >= 0);
  if (n === 0) return { value, sigma, relative };
  const col = new Map(ids.map((a, k) => [a, k]));
  const N = new Float64Array(n * n);
  const rhs = new Float64Array(n);
  for (const l of usable) {
    const w = 1 / (l.sigma * l.sigma);
    const h: [number, number][] = l.b >= 0 ? [[col.get(l.b)!, 1], [col.get(l.a)!, -1]] : [[col.get(l.a)!, 1]];
    for (const [r, hr] of h) {
      rhs[r] += w * hr * l.mean;
      for (const [c, hc] of h) N[r * n + c] += w * hr * hc;
    }
  }
  // Zero-sum gauge for pure differences: N + (s/n) 1 1^T has the same solution on 1-perp (s = mean diagonal).
  let trace = 0;
  for (let k = 0; k < n; k++) trace += N[k * n + k];
  const s = trace / n;
  if (relative) for (let k = 0; k < n * n; k++) N[k] += s / n;
  const L = new Float64Array(n * n);
  if (!choleskyFactor(N, 0, n, L, 0)) {
    // Links that leave some anchors unconnected: a tiny ridge keeps the solve defined; their sigma comes out huge.
    for (let k = 0; k < n; k++) N[k * n + k] += 1e-9 * s;
    if (!choleskyFactor(N, 0, n, L, 0)) return { value, sigma, relative };
  }
  const x = new Float64Array(n);
  choleskySolve(L, 0, n, rhs, 0, x, 0);
  const e = new Float64Array(n);
  const col_k = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    e.fill(0);
    e[k] = 1;
    choleskySolve(L, 0, n, e, 0, col_k, 0);
    // The pseudo-inverse in the zero-sum gauge is (N + (s/n) 1 1^T)^-1 - 1 1^T / (s n).
    const v = col_k[k] - (relative ? 1 / (s * n) : 0);
    sigma[ids[k]] = Math.sqrt(Math.max(0, v));
  }
  let shift = 0;
  if (relative) {
    const sorted = Array.from(x).sort((p, q) => p - q);
    shift = n % 2 ? sorted[(n - 1) / 2] : 0.5 * (sorted[n / 2 - 1] + sorted[n / 2]);
  }
  ids.forEach((a, k) => {
    value[a] = x[k] - shift;
  });
  return { value, sigma, relative };
}

/** Two-sided normal point of the gate: sqrt of the chi-square(1) quantile (3.29 for 0.999). */
export function gateZ(gate: number): number {
  return Math.sqrt(chi2Quantile(gate, 1));
}

/** The offset rule: biased when |value| > z sigma and |value| > spread / 2 (see the file comment). */
export function isBiased(value: number, sigma: number, gate: number, spread: number): boolean {
  if (!Number.isFinite(value) || !(sigma >= 0)) return false;
  return Math.abs(value) > gateZ(gate) * sigma && Math.abs(value) > 0.5 * (Number.isFinite(spread) ? spread : 0);
}

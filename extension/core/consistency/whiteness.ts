/**
 * Whiteness of a channel's innovations.
 *
 * - Per component c, the Ljung-Box test (Ljung and Box 1978) on the normalized innovation nu_c / sqrt(S_cc)
 *   (the raw innovation when S is not logged): under a consistent filter that sequence is white with unit variance,
 *   which the raw innovation is not when S changes (different anchors, geometry). Lags
 *   L = min(settings.whitenessLags, floor(K / 5)) for K accepted updates (no fitted parameters, so L degrees of
 *   freedom); not computed when L < 1.
 * - Filter restarts (`breaks`, the first update of each new segment) split the sequence into segments, and no lag
 *   product pairs an update before a restart with one after it: the figures are pooled within-segment estimators.
 *   Each segment is centred on its own mean and scaled to its own sample variance (so a segment whose S is off by
 *   a factor weighs as its length says), r_k = (1/K) sum over segments of the lag-k products within the segment
 *   (stats/autocorrelation.ts `segmentedAutocorrelation`), Q = K (K + 2) sum_k r_k^2 / P_k with P_k the lag-k pairs within
 *   segments (K - k for one segment: Ljung-Box itself), L degrees of freedom, and L is lowered until every lag has
 *   a pair. Pooled rather than a test per segment plus a combined test because one Q over all segments keeps one
 *   autocorrelation curve for the panel and L degrees of freedom, and a short segment (fewer than 5 L updates,
 *   common right after a restart) still contributes its pairs instead of being dropped.
 * - The channel's p-value `ljungBoxP` is the smallest component p times the number of components (Bonferroni,
 *   capped at 1); `not-white` is raised when it is below settings.familyAlpha (1%).
 * - Size. The chi-square reference of Q is only asymptotic: on white Gaussian noise its upper tail is heavier than
 *   chi-square(L) when L is not small against K (Var Q is about 2L + (4L^2 - 10L)/K, see
 *   docs/consistency.md), so a white channel of 300 updates at 20 lags raised `not-white` 1.6% of the time, not 1%.
 *   So when a component's chi-square p is below 2 familyAlpha (a candidate), its p is replaced by a Monte Carlo
 *   permutation p (Dwass 1957): Q of PERMUTATIONS random reorderings of the component within each segment (an
 *   i.i.d. sequence is exchangeable, so every reordering is as likely under whiteness), p = (1 + #{Q_b >= Q}) /
 *   (PERMUTATIONS + 1), which satisfies P(p <= u) <= u for every u. The chi-square p only screens, so a white
 *   channel raises `not-white` with probability at most familyAlpha (Bonferroni over components). The reorderings
 *   are seeded (the same report every run) and cost O(B K L), so they are made only while K L <= PERMUTATION_BUDGET
 *   / PERMUTATIONS (K <= 5000 at 20 lags); beyond that the chi-square p stands, whose size was measured at 1.1% for
 *   K = 3000 and 1.00% for K = 10^4 at 20 lags (docs/consistency.md).
 * - For the panel, Bar-Shalom's time-average normalized autocorrelation rho(j) = sum nu(k)^T nu(k+j) / sqrt(...)
 *   of the raw (angle-wrapped) innovation vectors for j = 1..L, with its 95% bound +-1.96/sqrt(P_j) for P_j pairs
 *   (K - j without restarts; Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4), products within segments only.
 * Everything is O(K * L), plus O(B K L) for a candidate component of a short channel.
 */
import {
  autocorrelation, ljungBox, normalizedAutocorrelation, segmentPairs, segmentedAutocorrelation, segmentedLjungBox,
  segmentedNormalizedAutocorrelation, twoSidedNormalQuantile,
} from '../stats/autocorrelation';
import { giveBack, takeFloat64 } from '../scratch';
import { makeSeededRandom } from '../stats/seededRandom';

/** Reorderings of the Monte Carlo permutation p of a candidate component. */
export const PERMUTATIONS = 999;

/** Largest PERMUTATIONS * K * L for which the permutation p is computed (about 0.1 s). */
export const PERMUTATION_BUDGET = 1e8;

/** Whiteness figures of one channel. */
export interface WhitenessResult {
  lags: number;
  /** Ljung-Box Q of the component with the smallest p. */
  ljungBoxQ: number;
  /** Bonferroni-adjusted channel p-value. */
  ljungBoxP: number;
  /** Component with the smallest p. */
  component: number;
  components: { ljungBoxQ: number; ljungBoxP: number }[];
  /** Normalized autocorrelation rho(1..L) and its 95% bounds. */
  rho: Float64Array;
  rhoBound: Float64Array;
  /** Lags with |rho| beyond the bound. */
  outside: number;
  /** Updates used. */
  count: number;
  /** Segments the updates were split into (1 without restarts). */
  segments: number;
  /** Reorderings behind a permutation p (0 when every p is the chi-square one). */
  permutations: number;
}

/** Ljung-Box Q of one component (pooled within segments when there are breaks); `r` receives r_1..r_lags. */
function componentQ(
  x: Float64Array, count: number, breaks: readonly number[], lags: number, pairs: Float64Array | undefined, r: Float64Array<ArrayBuffer>,
): { q: number; p: number } {
  if (!pairs) {
    autocorrelation(x, count, lags, r);
    return ljungBox(r, count, lags);
  }
  segmentedAutocorrelation(x, count, breaks, lags, r);
  return segmentedLjungBox(r, count, pairs, lags);
}

/**
 * Monte Carlo permutation p of Q (see the file comment): `x` reordered within each segment PERMUTATIONS times
 * (Fisher-Yates, seeded), p = (1 + reorderings with Q_b >= q) / (PERMUTATIONS + 1).
 */
function permutationP(
  x: Float64Array, count: number, breaks: readonly number[], lags: number, pairs: Float64Array | undefined, q: number,
  seed: number,
): number {
  const y = takeFloat64(count);
  y.set(x.subarray(0, count));
  const r = new Float64Array(lags);
  const rng = makeSeededRandom(seed);
  const cuts = [0, ...breaks, count];
  let atLeast = 0;
  for (let b = 0; b < PERMUTATIONS; b++) {
    for (let s = 0; s + 1 < cuts.length; s++) {
      const a = cuts[s];
      for (let i = cuts[s + 1] - 1; i > a; i--) {
        const j = a + Math.floor(rng.uniform() * (i - a + 1));
        const v = y[i]; y[i] = y[j]; y[j] = v;
      }
    }
    if (componentQ(y, count, breaks, lags, pairs, r).q >= q) atLeast++;
  }
  giveBack(y);
  return (1 + atLeast) / (PERMUTATIONS + 1);
}

/**
 * Whiteness of `count` accepted updates: `nu` raw innovations and `z` normalized ones, both row-major
 * `count * dof`, every value finite. `breaks` are the updates (indices in (0, count)) that start a new segment after
 * a filter restart, sorted; `familyAlpha` sets which components get a permutation p (chi-square p below twice it).
 * Undefined when there are too few updates for one lag.
 */
export function whiteness(
  nu: Float64Array, z: Float64Array, count: number, dof: number, maxLags: number,
  breaks: readonly number[] = [], familyAlpha = 0.01,
): WhitenessResult | undefined {
  let lags = Math.min(Math.floor(maxLags), Math.floor(count / 5));
  if (!(lags >= 1)) return undefined;
  // Pairs per lag within segments (only with restarts: without, every figure is the one-series one).
  let pairs: Float64Array | undefined;
  if (breaks.length > 0) {
    pairs = segmentPairs(count, breaks, lags);
    while (lags >= 1 && !(pairs[lags - 1] > 0)) lags--;
    if (lags < 1) return undefined;
  }
  const permute = count * lags * PERMUTATIONS <= PERMUTATION_BUDGET;
  let permutations = 0;
  // One component's normalized innovations in a scratch column (the flat array itself when there is one component).
  const column = dof === 1 ? z : takeFloat64(count);
  const r = new Float64Array(lags);
  const components: { ljungBoxQ: number; ljungBoxP: number }[] = [];
  let best = -1;
  let bestP = Infinity;
  for (let c = 0; c < dof; c++) {
    if (dof > 1) for (let k = 0; k < count; k++) column[k] = z[k * dof + c];
    const lb = componentQ(column, count, breaks, lags, pairs, r);
    let p = lb.p;
    if (permute && p < 2 * familyAlpha) {
      p = permutationP(column, count, breaks, lags, pairs, lb.q, 0x77686974 + c);
      permutations = PERMUTATIONS;
    }
    components.push({ ljungBoxQ: lb.q, ljungBoxP: p });
    if (p < bestP) { bestP = p; best = c; }
  }
  if (column !== z) giveBack(column);
  const rho = pairs
    ? segmentedNormalizedAutocorrelation(nu, dof, count, breaks, lags)
    : normalizedAutocorrelation(nu, dof, count, lags);
  const rhoBound = new Float64Array(lags);
  const z95 = twoSidedNormalQuantile(0.95); // once, not per lag (autocorrelationBound(0.95, pairs) per lag)
  let outside = 0;
  for (let j = 1; j <= lags; j++) {
    const np = pairs ? pairs[j - 1] : count - j;
    rhoBound[j - 1] = np > 0 ? z95 / Math.sqrt(np) : NaN;
    if (Math.abs(rho[j - 1]) > rhoBound[j - 1]) outside++;
  }
  const segments = breaks.length + 1;
  if (best < 0) {
    return {
      lags, ljungBoxQ: NaN, ljungBoxP: NaN, component: 0, components, rho, rhoBound, outside, count, segments, permutations,
    };
  }
  return {
    lags,
    ljungBoxQ: components[best].ljungBoxQ,
    ljungBoxP: Math.min(1, bestP * dof),
    component: best,
    components,
    rho,
    rhoBound,
    outside,
    count,
    segments,
    permutations,
  };
}

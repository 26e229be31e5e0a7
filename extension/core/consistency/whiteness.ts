/**
 * Whiteness of a channel's innovations.
 *
 * - Per component c, the Ljung-Box test (Ljung and Box 1978) on the normalized innovation nu_c / sqrt(S_cc)
 *   (the raw innovation when S is not logged): under a consistent filter that sequence is white with unit variance,
 *   which the raw innovation is not when S changes (different anchors, geometry). Lags
 *   L = min(settings.whitenessLags, floor(K / 5)) for K accepted updates (no fitted parameters, so L degrees of
 *   freedom); not computed when L < 1.
 * - The channel's p-value `ljungBoxP` is the smallest component p times the number of components (Bonferroni,
 *   capped at 1); `not-white` is raised when it is below settings.familyAlpha (1%), so a white channel raises it
 *   with probability about 1% (the chi-square reference of Q is approximate: measured 1.5% at K = 300 with 20 lags,
 *   1.0% at K = 3000; see docs/consistency.md).
 * - For the panel, Bar-Shalom's time-average normalized autocorrelation rho(j) = sum nu(k)^T nu(k+j) / sqrt(...)
 *   of the raw (angle-wrapped) innovation vectors for j = 1..L, with its 95% bound +-1.96/sqrt(K - j)
 *   (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4).
 * Everything is O(K * L).
 */
import { autocorrelation, ljungBox, normalizedAutocorrelation, twoSidedNormalQuantile } from '../stats/autocorrelation';
import { giveBack, takeFloat64 } from '../scratch';

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
}

/**
 * Whiteness of `count` accepted updates: `nu` raw innovations and `z` normalized ones, both row-major
 * `count * dof`, every value finite. Undefined when there are too few updates for one lag.
 */
export function whiteness(
  nu: Float64Array, z: Float64Array, count: number, dof: number, maxLags: number,
): WhitenessResult | undefined {
  const lags = Math.min(Math.floor(maxLags), Math.floor(count / 5));
  if (!(lags >= 1)) return undefined;
  // One component's normalized innovations in a scratch column (the flat array itself when there is one component).
  const column = dof === 1 ? z : takeFloat64(count);
  const r = new Float64Array(lags);
  const components: { ljungBoxQ: number; ljungBoxP: number }[] = [];
  let best = -1;
  let bestP = Infinity;
  for (let c = 0; c < dof; c++) {
    if (dof > 1) for (let k = 0; k < count; k++) column[k] = z[k * dof + c];
    autocorrelation(column, count, lags, r);
    const lb = ljungBox(r, count, lags);
    components.push({ ljungBoxQ: lb.q, ljungBoxP: lb.p });
    if (lb.p < bestP) { bestP = lb.p; best = c; }
  }
  if (column !== z) giveBack(column);
  const rho = normalizedAutocorrelation(nu, dof, count, lags);
  const rhoBound = new Float64Array(lags);
  const z95 = twoSidedNormalQuantile(0.95); // once, not per lag (autocorrelationBound(0.95, pairs) per lag)
  let outside = 0;
  for (let j = 1; j <= lags; j++) {
    const pairs = count - j;
    rhoBound[j - 1] = pairs > 0 ? z95 / Math.sqrt(pairs) : NaN;
    if (Math.abs(rho[j - 1]) > rhoBound[j - 1]) outside++;
  }
  if (best < 0) {
    return { lags, ljungBoxQ: NaN, ljungBoxP: NaN, component: 0, components, rho, rhoBound, outside, count };
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
  };
}

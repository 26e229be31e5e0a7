/**
 * Normalized innovation squared (NIS) per update: eps_nu(k) = nu(k)^T S(k)^-1 nu(k), chi-square with `dof` degrees
 * of freedom under the filter's own model (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4).
 *
 * Components the channel marks as angles are wrapped to (-pi, pi] before use. When the innovation or its covariance
 * is not logged (or S is not positive definite) the logged NIS (`nis_<ch>`) is used; otherwise the value is NaN.
 */
import type { Channel } from '../model';
import { inverseQuadraticForm } from '../linalg/cholesky';
import { chi2Sf } from '../stats/chi2';

/** Where each NIS value came from ({@link computeNisDetailed}). */
export const NIS_FROM_INNOVATION = 0;
/** NIS taken from the logged `nis_<ch>` column. */
export const NIS_FROM_LOG = 1;
/** Not computable: innovation, covariance and logged NIS all missing. */
export const NIS_MISSING = 2;
/** S was logged with a finite innovation but is not symmetric positive definite (NIS may still come from the log). */
export const NIS_BAD_COVARIANCE = 3;

const TWO_PI = 2 * Math.PI;

/** Wrap an angle in radians to (-pi, pi]; values already inside are returned unchanged (bit for bit). */
export function wrapAngle_rad(x_rad: number): number {
  if (x_rad > -Math.PI && x_rad <= Math.PI) return x_rad;
  return x_rad - TWO_PI * Math.ceil((x_rad - Math.PI) / TWO_PI);
}

/**
 * The channel's innovations with angle components wrapped to (-pi, pi] (`length * dof`, row-major). Returns the
 * channel's own array when no component is an angle (no copy).
 */
export function wrappedInnovations(channel: Channel): Float64Array {
  const { dof, length } = channel;
  if (!channel.angleComponents.some(Boolean)) return channel.nu;
  const out = channel.nu.slice(0, length * dof);
  for (let c = 0; c < dof; c++) {
    if (!channel.angleComponents[c]) continue;
    for (let i = 0; i < length; i++) out[i * dof + c] = wrapAngle_rad(out[i * dof + c]);
  }
  return out;
}

/**
 * NIS per update plus, in `source`, where each value came from (NIS_FROM_INNOVATION, NIS_FROM_LOG, NIS_MISSING,
 * NIS_BAD_COVARIANCE). A `NIS_BAD_COVARIANCE` update uses the logged NIS when there is one, else NaN.
 * One pass, allocation-free inside the loop.
 */
export function computeNisDetailed(channel: Channel): { nis: Float64Array; source: Uint8Array } {
  const { dof, length } = channel;
  const nu = wrappedInnovations(channel);
  const nis = new Float64Array(length);
  const source = new Uint8Array(length);
  const work = new Float64Array(dof * dof + dof);
  const haveS = hasFullS(channel);
  for (let i = 0; i < length; i++) source[i] = nisOfUpdate(channel, nu, haveS, i, work, nis);
  return { nis, source };
}

/** Whether the channel logs a full S for every update (the condition {@link nisOfUpdate} is given as `haveS`). */
export function hasFullS(channel: Channel): boolean {
  const { dof, length, S } = channel;
  return S !== undefined && S.length >= length * dof * dof && dof > 0;
}

/**
 * The NIS of update `i` (as {@link computeNisDetailed}), written to `nis[i]`; returns where it came from. `nu` is
 * the channel's wrapped innovations, `haveS` is {@link hasFullS}, `work` holds dof * dof + dof values. For a caller
 * that gathers its own figures in the same pass over the updates. No allocation.
 */
export function nisOfUpdate(channel: Channel, nu: Float64Array, haveS: boolean, i: number, work: Float64Array, nis: Float64Array): number {
  const { dof, S, nisLogged } = channel;
  let value = NaN;
  let from = NIS_MISSING;
  if (haveS && S !== undefined && dof === 1) {
    // The general branch below for one component, written out (most channels are scalar; the per-update
    // loops and calls cost more than the arithmetic on a cold start): x^2 / s, as inverseQuadraticForm gives.
    const x = nu[i];
    const s = S[i];
    if (Number.isFinite(x) && Number.isFinite(s)) {
      value = s > 0 ? (x * x) / s : NaN;
      from = Number.isFinite(value) ? NIS_FROM_INNOVATION : NIS_BAD_COVARIANCE;
    }
  } else if (haveS && S !== undefined) {
    let finite = true;
    const o = i * dof;
    for (let c = 0; c < dof; c++) if (!Number.isFinite(nu[o + c])) { finite = false; break; }
    if (finite) {
      const dd = dof * dof;
      let sFinite = true;
      const so = i * dd;
      for (let c = 0; c < dd; c++) if (!Number.isFinite(S[so + c])) { sFinite = false; break; }
      if (sFinite) {
        value = inverseQuadraticForm(S, so, dof, nu, o, work);
        from = Number.isFinite(value) ? NIS_FROM_INNOVATION : NIS_BAD_COVARIANCE;
      }
    }
  }
  if (!Number.isFinite(value)) {
    value = NaN;
    if (nisLogged !== undefined && i < nisLogged.length) {
      const logged = nisLogged[i];
      if (Number.isFinite(logged) && logged >= 0) {
        value = logged;
        if (from !== NIS_BAD_COVARIANCE) from = NIS_FROM_LOG;
      }
    }
  }
  nis[i] = value;
  return from;
}

/**
 * NIS per update of one channel: nu^T S^-1 nu with angle components wrapped to (-pi, pi], falling back to the
 * logged NIS, NaN where neither is computable. Length `channel.length`.
 */
export function computeNis(channel: Channel): Float64Array {
  return computeNisDetailed(channel).nis;
}

/**
 * Upper-tail probability P(X > nis) for X ~ chi-square(dof): the p-value of one update's NIS (tiny tails kept
 * precise). NaN for a NaN input.
 */
export function nisTailProbability(nis: number, dof: number): number {
  if (Number.isNaN(nis)) return NaN;
  return chi2Sf(nis, dof);
}

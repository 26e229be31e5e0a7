/**
 * Extended poses SE2(3) (Barrau and Bonnabel 2017): attitude, velocity and position in one group element,
 * the state of the invariant extended Kalman filter.
 *
 * Conventions (see quat.ts and sek3.ts): an element is stored flat in 15 numbers: `nav_R_body` row-major in
 * [0, 9), velocity v (m/s, nav) in [9, 12), position p (m, nav) in [12, 15). As a matrix it is
 * [[R, v, p], [0, 1, 0], [0, 0, 1]]. The tangent is [phi (rad), nu (m/s), rho (m)], ROTATION FIRST.
 * exp(phi, nu, rho) = (Exp(phi), J_l(phi) nu, J_l(phi) rho).
 * Left-invariant error eta_L = X_est^-1 X_true (body side), right-invariant eta_R = X_true X_est^-1 (nav side).
 */
import { sekBetween, sekCompose, sekExp, sekInverse, sekLog } from './sek3';
import type { Mat3 } from './so3';
import type { Vec3 } from './quat';

/** SE2(3) element: [R row-major (9), v (3), p (3)]. */
export type SE23 = Float64Array;
/** SE2(3) tangent: [phi (3, rad), nu (3, m/s), rho (3, m)]. */
export type SE23Tangent = Float64Array;

/** Allocate the identity. */
export function se23Create(): SE23 {
  const x = new Float64Array(15);
  x[0] = 1; x[4] = 1; x[8] = 1;
  return x;
}

/** Set `out` from attitude, velocity and position. */
export function se23FromRvp(out: SE23, R: Mat3, v_mps: Vec3, p_m: Vec3): SE23 {
  for (let i = 0; i < 9; i++) out[i] = R[i];
  out[9] = v_mps[0]; out[10] = v_mps[1]; out[11] = v_mps[2];
  out[12] = p_m[0]; out[13] = p_m[1]; out[14] = p_m[2];
  return out;
}

/** Exponential map: tangent [phi, nu, rho] to an element. */
export function se23Exp(out: SE23, xi: ArrayLike<number>): SE23 {
  return sekExp(out, xi, 2);
}

/** Logarithm map: element to tangent [phi, nu, rho]; |phi| in [0, pi]. */
export function se23Log(out: SE23Tangent, X: SE23): SE23Tangent {
  return sekLog(out, X, 2);
}

/** out = a b. `out` may alias an input. */
export function se23Compose(out: SE23, a: SE23, b: SE23): SE23 {
  return sekCompose(out, a, b, 2);
}

/** out = a^-1. */
export function se23Inverse(out: SE23, a: SE23): SE23 {
  return sekInverse(out, a, 2);
}

/** out = a^-1 b. */
export function se23Between(out: SE23, a: SE23, b: SE23): SE23 {
  return sekBetween(out, a, b, 2);
}

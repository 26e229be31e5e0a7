/**
 * Rigid transforms SE(3), for invariant position/attitude errors and trajectory alignment.
 *
 * Conventions (see quat.ts and sek3.ts): an element `nav_T_body` is stored flat in 12 numbers, the rotation
 * `nav_R_body` row-major in [0, 9) then the translation (body origin in nav, metres) in [9, 12); it maps body
 * points into nav: p_nav = R p_body + t. The tangent is [phi (rad, 3), rho (m, 3)], ROTATION FIRST.
 * exp(phi, rho) = (Exp(phi), J_l(phi) rho). Perturbations: left/nav side X_true = exp(xi) X_est, right/body side
 * X_true = X_est exp(xi).
 */
import { sekBetween, sekCompose, sekExp, sekInverse, sekLog } from './sek3';
import { mat3MulVec, type Mat3 } from './so3';
import type { Vec3 } from './quat';

/** SE(3) element: [R row-major (9), t (3)]. */
export type SE3 = Float64Array;
/** SE(3) tangent vector: [phi (3, rad), rho (3, m)]. */
export type SE3Tangent = Float64Array;

/** Allocate the identity transform. */
export function se3Create(): SE3 {
  const x = new Float64Array(12);
  x[0] = 1; x[4] = 1; x[8] = 1;
  return x;
}

/** Set `out` from a rotation matrix and a translation. */
export function se3FromRt(out: SE3, R: Mat3, t: Vec3): SE3 {
  for (let i = 0; i < 9; i++) out[i] = R[i];
  out[9] = t[0]; out[10] = t[1]; out[11] = t[2];
  return out;
}

/** Exponential map: tangent [phi, rho] to a transform. */
export function se3Exp(out: SE3, xi: ArrayLike<number>): SE3 {
  return sekExp(out, xi, 1);
}

/** Logarithm map: transform to tangent [phi, rho]; |phi| in [0, pi]. */
export function se3Log(out: SE3Tangent, X: SE3): SE3Tangent {
  return sekLog(out, X, 1);
}

/** out = a b (apply b first). `out` may alias an input. */
export function se3Compose(out: SE3, a: SE3, b: SE3): SE3 {
  return sekCompose(out, a, b, 1);
}

/** out = a^-1. */
export function se3Inverse(out: SE3, a: SE3): SE3 {
  return sekInverse(out, a, 1);
}

/** out = a^-1 b. */
export function se3Between(out: SE3, a: SE3, b: SE3): SE3 {
  return sekBetween(out, a, b, 1);
}

/** Act on a point: out = R p + t. */
export function se3Act(out: Vec3, X: SE3, p: Vec3): Vec3 {
  mat3MulVec(out, X, p);
  out[0] += X[9]; out[1] += X[10]; out[2] += X[11];
  return out;
}

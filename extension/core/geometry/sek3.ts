/**
 * The groups SE_K(3) = SO(3) ⋉ (R^3)^K shared by se3.ts (K = 1) and se23.ts (K = 2): the matrix
 * [[R, x_1 .. x_K], [0, I_K]]. Element storage (flat, 9 + 3K numbers): R row-major in [0, 9), then x_1, ..., x_K.
 * Tangent storage (3 + 3K numbers): rotation first, phi (rad), then rho_1 .. rho_K (the Barrau-Bonnabel order).
 * exp: R = Exp(phi), x_k = J_l(phi) rho_k; log inverts it with J_l^-1 (so3.ts). Conventions of quat.ts/so3.ts hold.
 *
 * Hand-written: the closed forms are a few lines on top of so3.ts; no npm package has SE2(3).
 */
import {
  mat3Multiply, mat3MulVec, mat3Transpose, so3Exp, so3LeftJacobian, so3LeftJacobianInverse, so3Log,
} from './so3';

const scratchJ = new Float64Array(9);
const scratchR = new Float64Array(9);
const scratchV = new Float64Array(3);
const scratchW = new Float64Array(3);
const scratchInv = new Float64Array(9 + 3 * 8);

/** exp of a tangent vector [phi, rho_1..rho_K] into an element [R, x_1..x_K] (K vector columns). */
export function sekExp(out: Float64Array, xi: ArrayLike<number>, K: number): Float64Array {
  const phi = scratchV;
  phi[0] = xi[0]; phi[1] = xi[1]; phi[2] = xi[2];
  so3Exp(out, phi);
  so3LeftJacobian(scratchJ, phi);
  for (let k = 0; k < K; k++) {
    scratchW[0] = xi[3 + 3 * k]; scratchW[1] = xi[4 + 3 * k]; scratchW[2] = xi[5 + 3 * k];
    mat3MulVec(scratchW, scratchJ, scratchW);
    out[9 + 3 * k] = scratchW[0]; out[10 + 3 * k] = scratchW[1]; out[11 + 3 * k] = scratchW[2];
  }
  return out;
}

/** log of an element [R, x_1..x_K] into a tangent vector [phi, rho_1..rho_K]. */
export function sekLog(out: Float64Array, X: Float64Array, K: number): Float64Array {
  const phi = scratchV;
  so3Log(phi, X);
  so3LeftJacobianInverse(scratchJ, phi);
  for (let k = 0; k < K; k++) {
    scratchW[0] = X[9 + 3 * k]; scratchW[1] = X[10 + 3 * k]; scratchW[2] = X[11 + 3 * k];
    mat3MulVec(scratchW, scratchJ, scratchW);
    out[3 + 3 * k] = scratchW[0]; out[4 + 3 * k] = scratchW[1]; out[5 + 3 * k] = scratchW[2];
  }
  out[0] = phi[0]; out[1] = phi[1]; out[2] = phi[2];
  return out;
}

/** out = a b: R = R_a R_b, x_k = R_a x_k^b + x_k^a. `out` may alias a or b. */
export function sekCompose(out: Float64Array, a: Float64Array, b: Float64Array, K: number): Float64Array {
  for (let k = 0; k < K; k++) {
    const o = 9 + 3 * k;
    scratchW[0] = b[o]; scratchW[1] = b[o + 1]; scratchW[2] = b[o + 2];
    mat3MulVec(scratchW, a, scratchW);
    const ax = a[o], ay = a[o + 1], az = a[o + 2];
    out[o] = scratchW[0] + ax; out[o + 1] = scratchW[1] + ay; out[o + 2] = scratchW[2] + az;
  }
  mat3Multiply(scratchR, a, b);
  for (let i = 0; i < 9; i++) out[i] = scratchR[i];
  return out;
}

/** out = a^-1: R^T, x_k -> -R^T x_k. `out` may alias a. */
export function sekInverse(out: Float64Array, a: Float64Array, K: number): Float64Array {
  mat3Transpose(scratchR, a);
  for (let k = 0; k < K; k++) {
    const o = 9 + 3 * k;
    scratchW[0] = a[o]; scratchW[1] = a[o + 1]; scratchW[2] = a[o + 2];
    mat3MulVec(scratchW, scratchR, scratchW);
    out[o] = -scratchW[0]; out[o + 1] = -scratchW[1]; out[o + 2] = -scratchW[2];
  }
  for (let i = 0; i < 9; i++) out[i] = scratchR[i];
  return out;
}

/** out = a^-1 b (the element taking a to b, expressed in a's frame). */
export function sekBetween(out: Float64Array, a: Float64Array, b: Float64Array, K: number): Float64Array {
  sekInverse(scratchInv, a, K);
  return sekCompose(out, scratchInv, b, K);
}

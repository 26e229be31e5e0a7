/**
 * Rotation matrices (SO(3)): conversions to and from quaternions and ZYX Euler angles, exp/log, Jacobians.
 *
 * Conventions: as in quat.ts (Hamilton, scalar first, body to navigation, navigation-side perturbation).
 * - `Mat3` is 9 numbers, ROW-MAJOR: R[i][j] = m[3 i + j]. `nav_R_body` maps body vectors into the navigation frame.
 * - Rotation vectors phi (rad) are axis * angle; `hat(phi)` is the skew matrix with hat(a) b = a × b.
 * - ZYX Euler angles (yaw psi, pitch theta, roll phi; rad): R = Rz(psi) Ry(theta) Rx(phi), the aerospace sequence.
 * - exp(phi) = I + sin(t)/t hat + (1 - cos t)/t^2 hat^2 (Rodrigues) with t = |phi|; the left Jacobian J_l is
 *   I + (1 - cos t)/t^2 hat + (t - sin t)/t^3 hat^2 (Exp(phi + d) ≈ Exp(J_l d) Exp(phi)).
 *
 * Hand-written: a dozen closed forms whose small-angle and near-pi branches must be explicit and float64;
 * no general-purpose npm library exposes them with those branches.
 */
import { SMALL_ANGLE_RAD, type QuatWXYZ, type Vec3 } from './quat';
import { hypot3 } from './hypot';

/** A 3x3 matrix stored row-major in 9 numbers. */
export type Mat3 = Float64Array | number[];

/** Allocate a 3x3 identity. */
export function mat3Create(): Float64Array {
  const m = new Float64Array(9);
  m[0] = 1; m[4] = 1; m[8] = 1;
  return m;
}

/** out = a b (3x3, row-major). `out` may alias a or b. */
export function mat3Multiply<T extends Mat3>(out: T, a: Mat3, b: Mat3): T {
  const a0 = a[0], a1 = a[1], a2 = a[2], a3 = a[3], a4 = a[4], a5 = a[5], a6 = a[6], a7 = a[7], a8 = a[8];
  const b0 = b[0], b1 = b[1], b2 = b[2], b3 = b[3], b4 = b[4], b5 = b[5], b6 = b[6], b7 = b[7], b8 = b[8];
  out[0] = a0 * b0 + a1 * b3 + a2 * b6; out[1] = a0 * b1 + a1 * b4 + a2 * b7; out[2] = a0 * b2 + a1 * b5 + a2 * b8;
  out[3] = a3 * b0 + a4 * b3 + a5 * b6; out[4] = a3 * b1 + a4 * b4 + a5 * b7; out[5] = a3 * b2 + a4 * b5 + a5 * b8;
  out[6] = a6 * b0 + a7 * b3 + a8 * b6; out[7] = a6 * b1 + a7 * b4 + a8 * b7; out[8] = a6 * b2 + a7 * b5 + a8 * b8;
  return out;
}

/** out = a b^T. `out` may alias a or b. */
export function mat3MultiplyTransposeB<T extends Mat3>(out: T, a: Mat3, b: Mat3): T {
  const a0 = a[0], a1 = a[1], a2 = a[2], a3 = a[3], a4 = a[4], a5 = a[5], a6 = a[6], a7 = a[7], a8 = a[8];
  const b0 = b[0], b1 = b[1], b2 = b[2], b3 = b[3], b4 = b[4], b5 = b[5], b6 = b[6], b7 = b[7], b8 = b[8];
  out[0] = a0 * b0 + a1 * b1 + a2 * b2; out[1] = a0 * b3 + a1 * b4 + a2 * b5; out[2] = a0 * b6 + a1 * b7 + a2 * b8;
  out[3] = a3 * b0 + a4 * b1 + a5 * b2; out[4] = a3 * b3 + a4 * b4 + a5 * b5; out[5] = a3 * b6 + a4 * b7 + a5 * b8;
  out[6] = a6 * b0 + a7 * b1 + a8 * b2; out[7] = a6 * b3 + a7 * b4 + a8 * b5; out[8] = a6 * b6 + a7 * b7 + a8 * b8;
  return out;
}

/** out = a^T b. `out` may alias a or b. */
export function mat3MultiplyTransposeA<T extends Mat3>(out: T, a: Mat3, b: Mat3): T {
  const a0 = a[0], a1 = a[1], a2 = a[2], a3 = a[3], a4 = a[4], a5 = a[5], a6 = a[6], a7 = a[7], a8 = a[8];
  const b0 = b[0], b1 = b[1], b2 = b[2], b3 = b[3], b4 = b[4], b5 = b[5], b6 = b[6], b7 = b[7], b8 = b[8];
  out[0] = a0 * b0 + a3 * b3 + a6 * b6; out[1] = a0 * b1 + a3 * b4 + a6 * b7; out[2] = a0 * b2 + a3 * b5 + a6 * b8;
  out[3] = a1 * b0 + a4 * b3 + a7 * b6; out[4] = a1 * b1 + a4 * b4 + a7 * b7; out[5] = a1 * b2 + a4 * b5 + a7 * b8;
  out[6] = a2 * b0 + a5 * b3 + a8 * b6; out[7] = a2 * b1 + a5 * b4 + a8 * b7; out[8] = a2 * b2 + a5 * b5 + a8 * b8;
  return out;
}

/** out = m^T. `out` may alias m. */
export function mat3Transpose<T extends Mat3>(out: T, m: Mat3): T {
  const m1 = m[1], m2 = m[2], m5 = m[5];
  out[0] = m[0]; out[4] = m[4]; out[8] = m[8];
  out[1] = m[3]; out[3] = m1;
  out[2] = m[6]; out[6] = m2;
  out[5] = m[7]; out[7] = m5;
  return out;
}

/** out = m v. */
export function mat3MulVec<T extends Vec3>(out: T, m: Mat3, v: Vec3): T {
  const x = v[0], y = v[1], z = v[2];
  out[0] = m[0] * x + m[1] * y + m[2] * z;
  out[1] = m[3] * x + m[4] * y + m[5] * z;
  out[2] = m[6] * x + m[7] * y + m[8] * z;
  return out;
}

/** out = m^T v. */
export function mat3TransposeMulVec<T extends Vec3>(out: T, m: Mat3, v: Vec3): T {
  const x = v[0], y = v[1], z = v[2];
  out[0] = m[0] * x + m[3] * y + m[6] * z;
  out[1] = m[1] * x + m[4] * y + m[7] * z;
  out[2] = m[2] * x + m[5] * y + m[8] * z;
  return out;
}

/** Skew matrix: hat(a) b = a × b. */
export function hat<T extends Mat3>(out: T, a: Vec3): T {
  out[0] = 0; out[1] = -a[2]; out[2] = a[1];
  out[3] = a[2]; out[4] = 0; out[5] = -a[0];
  out[6] = -a[1]; out[7] = a[0]; out[8] = 0;
  return out;
}

/** Inverse of hat on the skew part: vee(m) = ((m32 - m23)/2, (m13 - m31)/2, (m21 - m12)/2). */
export function vee<T extends Vec3>(out: T, m: Mat3): T {
  out[0] = (m[7] - m[5]) / 2; out[1] = (m[2] - m[6]) / 2; out[2] = (m[3] - m[1]) / 2;
  return out;
}

/** Hamilton rotation matrix of a unit quaternion (body to navigation). */
export function matFromQuat<T extends Mat3>(out: T, q: QuatWXYZ): T {
  const w = q[0], x = q[1], y = q[2], z = q[3];
  out[0] = 1 - 2 * (y * y + z * z); out[1] = 2 * (x * y - w * z); out[2] = 2 * (x * z + w * y);
  out[3] = 2 * (x * y + w * z); out[4] = 1 - 2 * (x * x + z * z); out[5] = 2 * (y * z - w * x);
  out[6] = 2 * (x * z - w * y); out[7] = 2 * (y * z + w * x); out[8] = 1 - 2 * (x * x + y * y);
  return out;
}

/**
 * Unit quaternion of a rotation matrix (Shepperd's method: pivot on the largest of w^2, x^2, y^2, z^2 so no
 * division by a small number); the result has w >= 0.
 */
export function quatFromMat<T extends QuatWXYZ>(out: T, m: Mat3): T {
  const m00 = m[0], m11 = m[4], m22 = m[8];
  const tr = m00 + m11 + m22;
  let w: number, x: number, y: number, z: number;
  if (tr >= m00 && tr >= m11 && tr >= m22) {
    const s = 2 * Math.sqrt(Math.max(0, 1 + tr));
    w = s / 4; x = (m[7] - m[5]) / s; y = (m[2] - m[6]) / s; z = (m[3] - m[1]) / s;
  } else if (m00 >= m11 && m00 >= m22) {
    const s = 2 * Math.sqrt(Math.max(0, 1 + m00 - m11 - m22));
    w = (m[7] - m[5]) / s; x = s / 4; y = (m[1] + m[3]) / s; z = (m[2] + m[6]) / s;
  } else if (m11 >= m22) {
    const s = 2 * Math.sqrt(Math.max(0, 1 + m11 - m00 - m22));
    w = (m[2] - m[6]) / s; x = (m[1] + m[3]) / s; y = s / 4; z = (m[5] + m[7]) / s;
  } else {
    const s = 2 * Math.sqrt(Math.max(0, 1 + m22 - m00 - m11));
    w = (m[3] - m[1]) / s; x = (m[2] + m[6]) / s; y = (m[5] + m[7]) / s; z = s / 4;
  }
  if (w < 0) { w = -w; x = -x; y = -y; z = -z; }
  const n = Math.hypot(w, x, y, z);
  out[0] = w / n; out[1] = x / n; out[2] = y / n; out[3] = z / n;
  return out;
}

/** Exponential map (Rodrigues): rotation vector phi (rad) to a rotation matrix, series below SMALL_ANGLE_RAD. */
export function so3Exp<T extends Mat3>(out: T, phi_rad: Vec3): T {
  const x = phi_rad[0], y = phi_rad[1], z = phi_rad[2];
  const t2 = x * x + y * y + z * z;
  const t = Math.sqrt(t2);
  let a: number, b: number; // sin(t)/t, (1 - cos t)/t^2
  if (t < SMALL_ANGLE_RAD) {
    // small-angle approximation: Taylor series to t^4
    a = 1 - t2 / 6 + (t2 * t2) / 120;
    b = 0.5 - t2 / 24 + (t2 * t2) / 720;
  } else {
    a = Math.sin(t) / t;
    b = (1 - Math.cos(t)) / t2;
  }
  // R = I + a hat + b hat^2, hat^2 = phi phi^T - t^2 I
  out[0] = 1 + b * (x * x - t2); out[1] = -a * z + b * x * y; out[2] = a * y + b * x * z;
  out[3] = a * z + b * x * y; out[4] = 1 + b * (y * y - t2); out[5] = -a * x + b * y * z;
  out[6] = -a * y + b * x * z; out[7] = a * x + b * y * z; out[8] = 1 + b * (z * z - t2);
  return out;
}

/**
 * Logarithm map: rotation matrix to rotation vector phi (rad), |phi| in [0, pi].
 * theta = atan2(|vee(R - R^T)|, tr R - 1) (well conditioned everywhere). Three branches:
 * - small angle (theta < SMALL_ANGLE_RAD): phi = vee(R - R^T)/2 * (1 + theta^2/6) (series of theta / sin theta);
 * - near pi (cos theta < -0.99): the axis u from (R + R^T)/2 = cos(theta) I + (1 - cos theta) u u^T, taking the
 *   largest diagonal entry, with its sign fixed by the skew part (sin theta >= 0);
 * - otherwise theta / sin(theta) * vee(R - R^T)/2.
 */
export function so3Log<T extends Vec3>(out: T, m: Mat3): T {
  const sx = (m[7] - m[5]) / 2, sy = (m[2] - m[6]) / 2, sz = (m[3] - m[1]) / 2; // sin(theta) u
  const s = hypot3(sx, sy, sz); // the bits of Math.hypot without its per-call allocation (hypot.ts)
  const c = (m[0] + m[4] + m[8] - 1) / 2; // cos(theta)
  const theta = Math.atan2(s, c);
  if (theta < SMALL_ANGLE_RAD) {
    const k = 1 + (theta * theta) / 6; // small-angle approximation of theta / sin(theta)
    out[0] = sx * k; out[1] = sy * k; out[2] = sz * k;
    return out;
  }
  if (c > -0.99) {
    const k = theta / s;
    out[0] = sx * k; out[1] = sy * k; out[2] = sz * k;
    return out;
  }
  // Near pi: sin(theta) is small, take the axis from the symmetric part.
  const oneMinusC = 1 - c;
  const d0 = (m[0] - c) / oneMinusC, d1 = (m[4] - c) / oneMinusC, d2 = (m[8] - c) / oneMinusC; // u_i^2
  const o01 = (m[1] + m[3]) / 2 / oneMinusC, o02 = (m[2] + m[6]) / 2 / oneMinusC, o12 = (m[5] + m[7]) / 2 / oneMinusC;
  let ux: number, uy: number, uz: number;
  if (d0 >= d1 && d0 >= d2) {
    ux = Math.sqrt(Math.max(0, d0)); uy = o01 / ux; uz = o02 / ux;
  } else if (d1 >= d2) {
    uy = Math.sqrt(Math.max(0, d1)); ux = o01 / uy; uz = o12 / uy;
  } else {
    uz = Math.sqrt(Math.max(0, d2)); ux = o02 / uz; uy = o12 / uz;
  }
  const n = Math.hypot(ux, uy, uz);
  let sign = 1 / n;
  if (ux * sx + uy * sy + uz * sz < 0) sign = -sign; // sin(theta) u must agree with the skew part
  out[0] = ux * sign * theta; out[1] = uy * sign * theta; out[2] = uz * sign * theta;
  return out;
}

/** Rotation angle (rad, in [0, pi]) of a rotation matrix. */
export function so3Angle(m: Mat3): number {
  const s = Math.hypot(m[7] - m[5], m[2] - m[6], m[3] - m[1]) / 2;
  return Math.atan2(s, (m[0] + m[4] + m[8] - 1) / 2);
}

/** Angle (rad, in [0, pi]) of the rotation between a and b: the angle of a b^T (equal to that of a^T b). */
export function so3AngleBetween(a: Mat3, b: Mat3): number {
  // trace(a b^T) and vee of a b^T without forming the product fully
  const r00 = a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
  const r11 = a[3] * b[3] + a[4] * b[4] + a[5] * b[5];
  const r22 = a[6] * b[6] + a[7] * b[7] + a[8] * b[8];
  const r12 = a[3] * b[6] + a[4] * b[7] + a[5] * b[8];
  const r21 = a[6] * b[3] + a[7] * b[4] + a[8] * b[5];
  const r02 = a[0] * b[6] + a[1] * b[7] + a[2] * b[8];
  const r20 = a[6] * b[0] + a[7] * b[1] + a[8] * b[2];
  const r01 = a[0] * b[3] + a[1] * b[4] + a[2] * b[5];
  const r10 = a[3] * b[0] + a[4] * b[1] + a[5] * b[2];
  const s = Math.hypot(r21 - r12, r02 - r20, r10 - r01) / 2;
  return Math.atan2(s, (r00 + r11 + r22 - 1) / 2);
}

/**
 * Left Jacobian of SO(3): J_l(phi) = I + (1 - cos t)/t^2 hat + (t - sin t)/t^3 hat^2, series below SMALL_ANGLE_RAD.
 * Used by the SE(3)/SE2(3) exponentials (translation part t = J_l(phi) rho).
 */
export function so3LeftJacobian<T extends Mat3>(out: T, phi_rad: Vec3): T {
  const x = phi_rad[0], y = phi_rad[1], z = phi_rad[2];
  const t2 = x * x + y * y + z * z;
  const t = Math.sqrt(t2);
  let a: number, b: number;
  if (t < SMALL_ANGLE_RAD) {
    a = 0.5 - t2 / 24 + (t2 * t2) / 720; // small-angle approximation of (1 - cos t)/t^2
    b = 1 / 6 - t2 / 120 + (t2 * t2) / 5040; // small-angle approximation of (t - sin t)/t^3
  } else {
    a = (1 - Math.cos(t)) / t2;
    b = (t - Math.sin(t)) / (t2 * t);
  }
  out[0] = 1 + b * (x * x - t2); out[1] = -a * z + b * x * y; out[2] = a * y + b * x * z;
  out[3] = a * z + b * x * y; out[4] = 1 + b * (y * y - t2); out[5] = -a * x + b * y * z;
  out[6] = -a * y + b * x * z; out[7] = a * x + b * y * z; out[8] = 1 + b * (z * z - t2);
  return out;
}

/**
 * Inverse left Jacobian: J_l^-1(phi) = I - hat/2 + (1/t^2 - cot(t/2)/(2t)) hat^2; the coefficient is written with
 * cot(t/2) so it stays finite up to t = pi, and uses its series 1/12 + t^2/720 + t^4/30240 below SMALL_ANGLE_RAD.
 */
export function so3LeftJacobianInverse<T extends Mat3>(out: T, phi_rad: Vec3): T {
  const x = phi_rad[0], y = phi_rad[1], z = phi_rad[2];
  const t2 = x * x + y * y + z * z;
  const t = Math.sqrt(t2);
  let b: number;
  if (t < SMALL_ANGLE_RAD) {
    b = 1 / 12 + t2 / 720 + (t2 * t2) / 30240; // small-angle approximation
  } else {
    b = 1 / t2 - 1 / (2 * t * Math.tan(t / 2));
  }
  const a = -0.5;
  out[0] = 1 + b * (x * x - t2); out[1] = -a * z + b * x * y; out[2] = a * y + b * x * z;
  out[3] = a * z + b * x * y; out[4] = 1 + b * (y * y - t2); out[5] = -a * x + b * y * z;
  out[6] = -a * y + b * x * z; out[7] = a * x + b * y * z; out[8] = 1 + b * (z * z - t2);
  return out;
}

/** Rotation matrix from ZYX Euler angles: R = Rz(yaw) Ry(pitch) Rx(roll), radians. */
export function matFromEulerZYX<T extends Mat3>(out: T, yaw_rad: number, pitch_rad: number, roll_rad: number): T {
  const cy = Math.cos(yaw_rad), sy = Math.sin(yaw_rad);
  const cp = Math.cos(pitch_rad), sp = Math.sin(pitch_rad);
  const cr = Math.cos(roll_rad), sr = Math.sin(roll_rad);
  out[0] = cy * cp; out[1] = cy * sp * sr - sy * cr; out[2] = cy * sp * cr + sy * sr;
  out[3] = sy * cp; out[4] = sy * sp * sr + cy * cr; out[5] = sy * sp * cr - cy * sr;
  out[6] = -sp; out[7] = cp * sr; out[8] = cp * cr;
  return out;
}

/**
 * ZYX Euler angles [yaw, pitch, roll] (rad) of a rotation matrix; pitch in [-pi/2, pi/2].
 * At gimbal lock (cos pitch below 1e-12) only yaw -/+ roll is defined: roll is set to 0 and yaw carries it,
 * so the round trip preserves R, not the separate angles.
 */
export function eulerZYXFromMat<T extends Vec3>(out: T, m: Mat3): T {
  const cp = Math.hypot(m[0], m[3]);
  const pitch = Math.atan2(-m[6], cp);
  if (cp > 1e-12) {
    out[0] = Math.atan2(m[3], m[0]);
    out[2] = Math.atan2(m[7], m[8]);
  } else {
    out[0] = Math.atan2(-m[1], m[4]);
    out[2] = 0;
  }
  out[1] = pitch;
  return out;
}

/** Quaternion from ZYX Euler angles: q = q_z(yaw) ⊗ q_y(pitch) ⊗ q_x(roll), radians. */
export function quatFromEulerZYX<T extends QuatWXYZ>(out: T, yaw_rad: number, pitch_rad: number, roll_rad: number): T {
  const cy = Math.cos(yaw_rad / 2), sy = Math.sin(yaw_rad / 2);
  const cp = Math.cos(pitch_rad / 2), sp = Math.sin(pitch_rad / 2);
  const cr = Math.cos(roll_rad / 2), sr = Math.sin(roll_rad / 2);
  out[0] = cy * cp * cr + sy * sp * sr;
  out[1] = cy * cp * sr - sy * sp * cr;
  out[2] = cy * sp * cr + sy * cp * sr;
  out[3] = sy * cp * cr - cy * sp * sr;
  return out;
}

const scratchMat = new Float64Array(9);

/** ZYX Euler angles [yaw, pitch, roll] (rad) of a unit quaternion (through its matrix; same gimbal-lock rule). */
export function eulerZYXFromQuat<T extends Vec3>(out: T, q: QuatWXYZ): T {
  return eulerZYXFromMat(out, matFromQuat(scratchMat, q));
}

/**
 * How far m is from a rotation: the largest of |det(m) - 1| and the largest entry of |m m^T - I|
 * (the log conventions call a matrix valid below 1e-3).
 */
export function rotationDefect(m: Mat3): number {
  const det = m[0] * (m[4] * m[8] - m[5] * m[7]) - m[1] * (m[3] * m[8] - m[5] * m[6]) + m[2] * (m[3] * m[7] - m[4] * m[6]);
  let worst = Math.abs(det - 1);
  for (let i = 0; i < 3; i++) {
    for (let j = 0; j < 3; j++) {
      const v = m[3 * i] * m[3 * j] + m[3 * i + 1] * m[3 * j + 1] + m[3 * i + 2] * m[3 * j + 2] - (i === j ? 1 : 0);
      worst = Math.max(worst, Math.abs(v));
    }
  }
  return Number.isFinite(worst) ? worst : Infinity;
}

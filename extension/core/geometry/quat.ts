/**
 * Unit quaternions for attitude.
 *
 * Conventions (stated once, here; every geometry module follows them):
 * - Storage order is SCALAR FIRST: `QuatWXYZ = [w, x, y, z]` (q = w + x i + y j + z k).
 * - Hamilton algebra: i j = k (i ⊗ j = k), right-handed. `quatMultiply(out, a, b)` is the Hamilton product a ⊗ b.
 * - A quaternion `nav_q_body` rotates BODY vectors into the NAVIGATION frame: v_nav = q ⊗ v_body ⊗ q*, i.e.
 *   v_nav = R(q) v_body with R(q) the Hamilton rotation matrix (so3.ts `matFromQuat`).
 *   Products compose right to left: nav_q_sensor = nav_q_body ⊗ body_q_sensor.
 * - Perturbations are on the NAVIGATION (left, global) side unless a function says otherwise:
 *   q_true = Exp(δθ) ⊗ q_est, matching the default attitude error R_err = R_true R_est^T of the log conventions.
 *   The body (right, local) side is q_true = q_est ⊗ Exp(δθ).
 * - q and -q are the same rotation; comparisons use |dot| or the angle of a* ⊗ b.
 * - Functions write into an `out` argument and return it, so hot loops allocate nothing. `out` may alias an input.
 *
 * Hand-written rather than taken from a library: three/gl-matrix store w last, and gl-matrix defaults to Float32;
 * these few formulas in float64 with scalar-first storage are shorter than adapting them at every call.
 */

/** A quaternion stored scalar first: [w, x, y, z] (Hamilton). */
export type QuatWXYZ = Float64Array | [number, number, number, number];

/** A 3-vector (metres, radians, ...: the name of the variable carries the unit). */
export type Vec3 = Float64Array | [number, number, number];

/** Below this rotation angle (rad) the small-angle series are used instead of the closed forms. */
export const SMALL_ANGLE_RAD = 1e-4;

/** Allocate a quaternion (identity unless values are given). */
export function quatCreate(w = 1, x = 0, y = 0, z = 0): Float64Array {
  const q = new Float64Array(4);
  q[0] = w; q[1] = x; q[2] = y; q[3] = z;
  return q;
}

/** Write the identity rotation [1, 0, 0, 0] into `out`. */
export function quatIdentity<T extends QuatWXYZ>(out: T): T {
  out[0] = 1; out[1] = 0; out[2] = 0; out[3] = 0;
  return out;
}

/** Copy `a` into `out`. */
export function quatCopy<T extends QuatWXYZ>(out: T, a: QuatWXYZ): T {
  out[0] = a[0]; out[1] = a[1]; out[2] = a[2]; out[3] = a[3];
  return out;
}

/** Hamilton product out = a ⊗ b (apply b first, then a, to a vector). */
export function quatMultiply<T extends QuatWXYZ>(out: T, a: QuatWXYZ, b: QuatWXYZ): T {
  const aw = a[0], ax = a[1], ay = a[2], az = a[3];
  const bw = b[0], bx = b[1], by = b[2], bz = b[3];
  out[0] = aw * bw - ax * bx - ay * by - az * bz;
  out[1] = aw * bx + ax * bw + ay * bz - az * by;
  out[2] = aw * by - ax * bz + ay * bw + az * bx;
  out[3] = aw * bz + ax * by - ay * bx + az * bw;
  return out;
}

/** Conjugate out = a* (the inverse of a unit quaternion). */
export function quatConjugate<T extends QuatWXYZ>(out: T, a: QuatWXYZ): T {
  out[0] = a[0]; out[1] = -a[1]; out[2] = -a[2]; out[3] = -a[3];
  return out;
}

/** Euclidean norm of the four components. */
export function quatNorm(a: QuatWXYZ): number {
  return Math.hypot(a[0], a[1], a[2], a[3]);
}

/** Four-component dot product. */
export function quatDot(a: QuatWXYZ, b: QuatWXYZ): number {
  return a[0] * b[0] + a[1] * b[1] + a[2] * b[2] + a[3] * b[3];
}

/** out = a / |a|; a zero or non-finite quaternion gives NaNs (the caller decides what to do with it). */
export function quatNormalize<T extends QuatWXYZ>(out: T, a: QuatWXYZ): T {
  const n = quatNorm(a);
  const s = n > 0 && Number.isFinite(n) ? 1 / n : NaN;
  out[0] = a[0] * s; out[1] = a[1] * s; out[2] = a[2] * s; out[3] = a[3] * s;
  return out;
}

/** Rotate a body vector into the navigation frame: out = q ⊗ v ⊗ q* = R(q) v. */
export function quatRotate<T extends Vec3>(out: T, q: QuatWXYZ, v: Vec3): T {
  // t = 2 q_v × v ; v' = v + w t + q_v × t (the usual two-cross-product form of the Hamilton sandwich).
  const w = q[0], x = q[1], y = q[2], z = q[3];
  const vx = v[0], vy = v[1], vz = v[2];
  const tx = 2 * (y * vz - z * vy);
  const ty = 2 * (z * vx - x * vz);
  const tz = 2 * (x * vy - y * vx);
  out[0] = vx + w * tx + (y * tz - z * ty);
  out[1] = vy + w * ty + (z * tx - x * tz);
  out[2] = vz + w * tz + (x * ty - y * tx);
  return out;
}

/** Rotation by angle_rad about a unit axis (the axis is not re-normalised). */
export function quatFromAxisAngle<T extends QuatWXYZ>(out: T, axis: Vec3, angle_rad: number): T {
  const h = angle_rad / 2;
  const s = Math.sin(h);
  out[0] = Math.cos(h); out[1] = axis[0] * s; out[2] = axis[1] * s; out[3] = axis[2] * s;
  return out;
}

/**
 * Exponential map: rotation vector phi (rad, axis times angle) to a unit quaternion,
 * q = [cos(|phi|/2), sin(|phi|/2) phi/|phi|], with the series sin(h)/(2h) = 1/2 - h^2/12 + ... for small angles.
 */
export function quatExp<T extends QuatWXYZ>(out: T, phi_rad: Vec3): T {
  const theta = Math.hypot(phi_rad[0], phi_rad[1], phi_rad[2]);
  const h = theta / 2;
  let k: number; // sin(theta/2) / theta
  if (theta < SMALL_ANGLE_RAD) {
    const h2 = h * h;
    k = 0.5 * (1 - h2 / 6 + (h2 * h2) / 120); // small-angle series of sin(h)/h, halved
  } else {
    k = Math.sin(h) / theta;
  }
  out[0] = Math.cos(h);
  out[1] = phi_rad[0] * k; out[2] = phi_rad[1] * k; out[3] = phi_rad[2] * k;
  return out;
}

/**
 * Logarithm map: unit quaternion to the rotation vector phi (rad) with |phi| in [0, pi]
 * (q and -q give the same result). Uses theta = 2 atan2(|q_v|, |w|), well conditioned at every angle.
 */
export function quatLog<T extends Vec3>(out: T, q: QuatWXYZ): T {
  let w = q[0], x = q[1], y = q[2], z = q[3];
  if (w < 0) { w = -w; x = -x; y = -y; z = -z; } // shortest rotation
  const s = Math.hypot(x, y, z);
  let k: number; // theta / s
  if (s < SMALL_ANGLE_RAD * 0.5) {
    // theta = 2 atan(s / w); series 2/w (1 - s^2/(3 w^2)) (small-angle approximation)
    const r = s / w;
    k = (2 / w) * (1 - (r * r) / 3);
  } else {
    k = (2 * Math.atan2(s, w)) / s;
  }
  out[0] = x * k; out[1] = y * k; out[2] = z * k;
  return out;
}

/** Rotation angle (rad, in [0, pi]) of q. */
export function quatAngle(q: QuatWXYZ): number {
  return 2 * Math.atan2(Math.hypot(q[1], q[2], q[3]), Math.abs(q[0]));
}

/** Angle (rad, in [0, pi]) of the rotation between a and b, i.e. of a* ⊗ b; treats q and -q as equal. */
export function quatAngleBetween(a: QuatWXYZ, b: QuatWXYZ): number {
  const aw = a[0], ax = -a[1], ay = -a[2], az = -a[3];
  const bw = b[0], bx = b[1], by = b[2], bz = b[3];
  const w = aw * bw - ax * bx - ay * by - az * bz;
  const x = aw * bx + ax * bw + ay * bz - az * by;
  const y = aw * by - ax * bz + ay * bw + az * bx;
  const z = aw * bz + ax * by - ay * bx + az * bw;
  return 2 * Math.atan2(Math.hypot(x, y, z), Math.abs(w));
}

/**
 * Spherical linear interpolation from a (f = 0) to b (f = 1) along the shorter arc; unit inputs expected.
 * Falls back to normalised linear interpolation when the two are within 1e-6 rad of each other.
 */
export function quatSlerp<T extends QuatWXYZ>(out: T, a: QuatWXYZ, b: QuatWXYZ, f: number): T {
  let bw = b[0], bx = b[1], by = b[2], bz = b[3];
  let c = a[0] * bw + a[1] * bx + a[2] * by + a[3] * bz;
  if (c < 0) { c = -c; bw = -bw; bx = -bx; by = -by; bz = -bz; }
  let ka: number, kb: number;
  if (c > 1 - 1e-12) {
    ka = 1 - f; kb = f;
  } else {
    const omega = Math.acos(Math.min(1, c));
    const so = Math.sin(omega);
    ka = Math.sin((1 - f) * omega) / so;
    kb = Math.sin(f * omega) / so;
  }
  out[0] = ka * a[0] + kb * bw; out[1] = ka * a[1] + kb * bx;
  out[2] = ka * a[2] + kb * by; out[3] = ka * a[3] + kb * bz;
  return quatNormalize(out, out);
}

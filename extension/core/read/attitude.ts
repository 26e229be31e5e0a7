/**
 * Attitude at the reader's edge: every logged form becomes a Hamilton quaternion `q_w q_x q_y q_z` (scalar first)
 * rotating body vectors into the navigation frame (nav_R_body), as model.ts states. The formulas live in
 * `core/geometry` (so3.ts, quat.ts); this file only applies the log conventions' validity rules:
 * a quaternion is valid when its norm is within 1e-3 of 1, a matrix when |det(R) - 1| and the largest entry of
 * |R R^T - I| are under 1e-3; an invalid attitude within 10% is repaired (normalised / projected), beyond that the
 * epoch's attitude is left out.
 */
import { quatFromEulerZYX, quatFromMat, rotationDefect } from '../geometry/so3';

/** Tolerance of a valid attitude (log-conventions.md, "Errors"). */
export const ATTITUDE_TOLERANCE = 1e-3;
/** Largest defect that is still repaired rather than dropped. */
export const ATTITUDE_REPAIR_LIMIT = 0.1;

/** Outcome of checking one attitude. */
export type AttitudeStatus = 'ok' | 'repaired' | 'dropped';

/**
 * Defect of the last attitude checked (|norm - 1| of a quaternion, or the matrix defect) in element 0. An array, not
 * a result object or a module variable, so the per-epoch check allocates nothing (a double stored in a module
 * variable is boxed).
 */
export const lastAttitudeDefect = new Float64Array(1);

/**
 * Check and, where allowed, normalise the quaternion [w, x, y, z] in `q` (in place). Returns the status; the norm
 * defect |norm - 1| is left in `lastAttitudeDefect[0]`. A dropped quaternion is set to NaN.
 */
export function checkQuaternion(q: Float64Array): AttitudeStatus {
  const norm = Math.sqrt(q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3]);
  const defect = Math.abs(norm - 1);
  lastAttitudeDefect[0] = defect;
  if (defect <= ATTITUDE_TOLERANCE) return 'ok';
  if (defect <= ATTITUDE_REPAIR_LIMIT && norm > 0) {
    q[0] /= norm; q[1] /= norm; q[2] /= norm; q[3] /= norm;
    return 'repaired';
  }
  q.fill(NaN);
  if (!Number.isFinite(defect)) lastAttitudeDefect[0] = Infinity;
  return 'dropped';
}

/**
 * Quaternion (into `q`) of the row-major body-to-navigation matrix `m` (r_11..r_33); its defect is left in
 * `lastAttitudeDefect[0]`. A matrix off by more than the repair limit gives NaN.
 */
export function quaternionFromMatrix(q: Float64Array, m: Float64Array): AttitudeStatus {
  const defect = rotationDefect(m);
  lastAttitudeDefect[0] = defect;
  if (defect > ATTITUDE_REPAIR_LIMIT) {
    q.fill(NaN);
    return 'dropped';
  }
  quatFromMat(q, m);
  return defect > ATTITUDE_TOLERANCE ? 'repaired' : 'ok';
}

/** Quaternion (into `q`) of ZYX Euler angles in radians: R = Rz(yaw) Ry(pitch) Rx(roll). */
export function quaternionFromEuler(q: Float64Array, roll_rad: number, pitch_rad: number, yaw_rad: number): void {
  quatFromEulerZYX(q, yaw_rad, pitch_rad, roll_rad);
}

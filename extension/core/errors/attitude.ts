/**
 * Attitude of a run read on demand: the rotation matrix of one epoch is computed from the quaternion columns
 * when a caller needs it, into a caller's scratch matrix, instead of a 9-value-per-epoch matrix column (72 bytes
 * per epoch of fresh memory that every long log paid for, though each matrix is read once or twice).
 *
 * Quaternions are Hamilton, scalar first (w, x, y, z), rotating body vectors into the navigation frame
 * (model.ts). The arithmetic is that of the former precomputed path, step by step, so the matrices are the same
 * to the last bit: a logged quaternion is normalised when its norm is within 10% of 1 and rejected otherwise; a
 * reference in the same records is normalised once more (as the interpolation did for every bracketing sample);
 * an interpolated reference is already unit.
 */
import { hypot4 } from '../geometry/hypot';

/** How the quaternion columns become a unit quaternion. */
export type AttitudeNormalisation =
  /** Logged values: normalised by their norm when it is within 10% of 1, rejected otherwise. */
  | 'logged'
  /** Logged values as a reference on the estimate's own epochs: as 'logged', then normalised once more. */
  | 'loggedTwice'
  /** Already unit (interpolated reference, NaN where excluded). */
  | 'unit';

/** Quaternion columns of one attitude and how to turn them into rotation matrices. */
export interface AttitudeColumns {
  w: Float64Array;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  normalisation: AttitudeNormalisation;
}

/** Largest relative departure of a logged quaternion's norm from 1 that is still normalised (not rejected). */
export const QUAT_NORM_TOLERANCE = 0.1;

/** How precisely {@link rotationAt} takes the norm: as the stored errors always did, or with a plain square root. */
export type NormArithmetic = 'exact' | 'fast';

/**
 * Rotation matrix `nav_R_body` (row-major 3x3) of epoch `k` into `out`. Returns false, leaving `out` unspecified,
 * when the epoch has no usable attitude (missing, non-finite, or a logged norm off by more than 10%).
 */
export function rotationAt(out: Float64Array, a: AttitudeColumns, k: number, arithmetic: NormArithmetic = 'exact'): boolean {
  let w = a.w[k], x = a.x[k], y = a.y[k], z = a.z[k];
  if (a.normalisation !== 'unit') {
    // 'exact': hypot4, the bits of Math.hypot without its per-call allocation (geometry/hypot.ts, 2-3x faster).
    // 'fast': a plain square root, which differs by at most a unit in the last place
    // (aggregates such as the relative error do not see it; the per-epoch orientation errors keep the exact norm)
    const nrm = arithmetic === 'fast' ? Math.sqrt(w * w + x * x + y * y + z * z) : hypot4(w, x, y, z);
    if (!(Number.isFinite(nrm) && Math.abs(nrm - 1) <= QUAT_NORM_TOLERANCE)) return false;
    w /= nrm; x /= nrm; y /= nrm; z /= nrm;
    if (a.normalisation === 'loggedTwice') {
      // as quatNormalize: multiply by the reciprocal of the norm
      const n2 = arithmetic === 'fast' ? Math.sqrt(w * w + x * x + y * y + z * z) : hypot4(w, x, y, z);
      const s = n2 > 0 && Number.isFinite(n2) ? 1 / n2 : NaN;
      w *= s; x *= s; y *= s; z *= s;
    }
  }
  if (!Number.isFinite(w)) return false;
  // matFromQuat (geometry/so3.ts) written out on the locals: the same arithmetic, no quaternion scratch
  out[0] = 1 - 2 * (y * y + z * z); out[1] = 2 * (x * y - w * z); out[2] = 2 * (x * z + w * y);
  out[3] = 2 * (x * y + w * z); out[4] = 1 - 2 * (x * x + z * z); out[5] = 2 * (y * z - w * x);
  out[6] = 2 * (x * z - w * y); out[7] = 2 * (y * z + w * x); out[8] = 1 - 2 * (x * x + y * y);
  return Number.isFinite(out[0]);
}

/**
 * Unit quaternion columns of logged quaternions (NaN where the norm is not within 10% of 1): only for a reference
 * at its own rate, whose samples are interpolated; a reference on the estimate's epochs is read in place.
 */
export function normalisedQuaternionColumns(w: Float64Array, x: Float64Array, y: Float64Array, z: Float64Array, n: number): Float64Array[] {
  const ow = new Float64Array(n), ox = new Float64Array(n), oy = new Float64Array(n), oz = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const a = w[k], b = x[k], c = y[k], d = z[k];
    const nrm = hypot4(a, b, c, d);
    if (Number.isFinite(nrm) && Math.abs(nrm - 1) <= QUAT_NORM_TOLERANCE) {
      ow[k] = a / nrm; ox[k] = b / nrm; oy[k] = c / nrm; oz[k] = d / nrm;
    } else {
      ow[k] = NaN; ox[k] = NaN; oy[k] = NaN; oz[k] = NaN;
    }
  }
  return [ow, ox, oy, oz];
}

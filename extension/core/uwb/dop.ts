/**
 * Dilution of precision (DOP): how the geometry of the transmitters maps unit measurement noise into position
 * error, sqrt of the trace of the (weighted) least-squares covariance for noise of unit variance.
 *
 * - GNSS form (Kaplan and Hegarty, Understanding GPS, 2nd ed., ch. 7; Misra and Enge): rows G_i = [-e_i, 1] with
 *   e_i the unit line of sight from the receiver to transmitter i and a clock column; Q = (G^T G)^-1,
 *   GDOP = sqrt(tr Q), PDOP = sqrt(Q11+Q22+Q33), HDOP = sqrt(Q11+Q22), VDOP = sqrt(Q33), TDOP = sqrt(Q44).
 * - TDOA form: range differences d_i - d_ref against one reference anchor, rows H_i = (u_i - u_ref)^T with
 *   u_i = (p - s_i)/|p - s_i|. Differencing m + 1 independent ranges of variance sigma^2 against a common
 *   reference gives correlated noise C = sigma^2 (I + 1 1^T); the DOP is sqrt(tr((H^T C^-1 H)^-1)) with sigma = 1.
 *   C^-1 = I - 1 1^T / (m + 1) (Sherman-Morrison), so H^T C^-1 H = H^T H - (H^T 1)(1^T H)/(m + 1) is formed
 *   without an m x m inverse. With the correlation kept, the result does not depend on the reference and equals
 *   the PDOP of the same anchors in the GNSS form (the clock column plays the unknown common offset); ignoring it
 *   gives a different, wrong figure (reference-checks.md sec. 6.2).
 * - Two-way ranges: rows u_i^T, no clock column.
 *
 * Geometry whose normal matrix is not positive definite, or whose DOP exceeds {@link SINGULAR_DOP}, is undefined
 * (the functions return undefined) and is counted, never averaged.
 */
import { choleskyFactor, choleskySolve } from '../linalg/cholesky';
import type { Vec3_m } from './vec3';

/** Beyond this value a DOP is treated as numerically singular geometry (undefined). */
export const SINGULAR_DOP = 1e6;

/** DOP figures; `gdop` and `tdop` only in the GNSS form (with a clock column). */
export interface DopFigures {
  gdop?: number;
  pdop: number;
  hdop: number;
  vdop: number;
  tdop?: number;
}

/** Unit line of sight in ENU from elevation and azimuth (radians, azimuth clockwise from north): (cos el sin az, cos el cos az, sin el). */
export function lineOfSightEnu(el_rad: number, az_rad: number): Vec3_m {
  return [Math.cos(el_rad) * Math.sin(az_rad), Math.cos(el_rad) * Math.cos(az_rad), Math.sin(el_rad)];
}

const invL = new Float64Array(16);
const invE = new Float64Array(4);
const invX = new Float64Array(4);
const invD = new Float64Array(4);

/**
 * Diagonal of the inverse of the symmetric n x n matrix `a` (row-major) via Cholesky; undefined when not SPD.
 * The result is a shared work array (valid until the next call).
 */
function inverseDiagonal(a: Float64Array, n: number): Float64Array | undefined {
  // work arrays reused between calls (one DOP per geometry window: thousands of calls per log); the result is read
  // by the caller at once and never kept
  const l = invL.length >= n * n ? invL : new Float64Array(n * n);
  if (!choleskyFactor(a, 0, n, l, 0)) return undefined;
  const e = invE.length >= n ? invE.subarray(0, n) : new Float64Array(n);
  const x = invX.length >= n ? invX : new Float64Array(n);
  const d = invD.length >= n ? invD : new Float64Array(n);
  for (let k = 0; k < n; k++) {
    e.fill(0);
    e[k] = 1;
    choleskySolve(l, 0, n, e, 0, x, 0);
    d[k] = x[k];
    if (!(d[k] > 0) || !Number.isFinite(d[k])) return undefined;
  }
  return d;
}

function figures(q: Float64Array, withClock: boolean): DopFigures | undefined {
  const pdop = Math.sqrt(q[0] + q[1] + q[2]);
  if (!(pdop <= SINGULAR_DOP)) return undefined;
  const out: DopFigures = { pdop, hdop: Math.sqrt(q[0] + q[1]), vdop: Math.sqrt(q[2]) };
  if (withClock) {
    out.gdop = Math.sqrt(q[0] + q[1] + q[2] + q[3]);
    out.tdop = Math.sqrt(q[3]);
  }
  return out;
}

/**
 * GNSS-form DOP from unit lines of sight (receiver to transmitter), rows [-e_i, 1]. Needs at least 4 directions;
 * undefined for fewer or for singular geometry.
 */
export function dopFromLineOfSight(los: readonly Vec3_m[]): DopFigures | undefined {
  if (los.length < 4) return undefined;
  const n = new Float64Array(16);
  for (const e of los) {
    const g = [-e[0], -e[1], -e[2], 1];
    for (let r = 0; r < 4; r++) for (let c = 0; c < 4; c++) n[r * 4 + c] += g[r] * g[c];
  }
  const q = inverseDiagonal(n, 4);
  return q ? figures(q, true) : undefined;
}

/** Unit vector from `from` to `to`; undefined when the points coincide. */
function unit(from: Vec3_m, to: Vec3_m): Vec3_m | undefined {
  const dx = to[0] - from[0];
  const dy = to[1] - from[1];
  const dz = to[2] - from[2];
  const r = Math.sqrt(dx * dx + dy * dy + dz * dz);
  if (!(r > 0) || !Number.isFinite(r)) return undefined;
  return [dx / r, dy / r, dz / r];
}

/**
 * GNSS-form DOP of anchors seen from position `p` (time of arrival with an unknown common offset): the clock
 * column stands for the offset. Equal to {@link tdoaDop} with correlated noise for the same anchors.
 */
export function toaOffsetDop(anchors: readonly Vec3_m[], p: Vec3_m): DopFigures | undefined {
  const los: Vec3_m[] = [];
  for (const s of anchors) {
    const e = unit(p, s);
    if (!e) return undefined;
    los.push(e);
  }
  return dopFromLineOfSight(los);
}

/** Work arrays of {@link tdoaDop} (normal matrix, column sums, one row), reused between calls. */
const tdoaN = new Float64Array(9);
const tdoaSum = new Float64Array(3);
const tdoaH = new Float64Array(3);

/** Options of {@link tdoaDop}. */
export interface TdoaDopOptions {
  /** Index of the reference anchor (0). */
  reference?: number;
  /** Keep the correlation C = sigma^2 (I + 1 1^T) of differences against one reference (true). False is wrong and exists for comparison. */
  correlated?: boolean;
}

/**
 * DOP of range differences d_i - d_ref for a tag at `p` (3-D position block of the weighted LS covariance, unit
 * sigma). Needs at least 4 anchors (3 independent differences); undefined for fewer or for singular geometry.
 */
export function tdoaDop(anchors: readonly Vec3_m[], p: Vec3_m, options: TdoaDopOptions = {}): DopFigures | undefined {
  const ref = options.reference ?? 0;
  const correlated = options.correlated ?? true;
  if (anchors.length < 4 || ref < 0 || ref >= anchors.length) return undefined;
  const uRef = unit(anchors[ref], p);
  if (!uRef) return undefined;
  const n = tdoaN.fill(0);
  const sum = tdoaSum.fill(0);
  const h = tdoaH;
  let m = 0;
  for (let i = 0; i < anchors.length; i++) {
    if (i === ref) continue;
    // unit(anchors[i], p) written out (no array per anchor): the same operations
    const dx = p[0] - anchors[i][0];
    const dy = p[1] - anchors[i][1];
    const dz = p[2] - anchors[i][2];
    const rr = Math.sqrt(dx * dx + dy * dy + dz * dz);
    if (!(rr > 0) || !Number.isFinite(rr)) return undefined;
    h[0] = dx / rr - uRef[0];
    h[1] = dy / rr - uRef[1];
    h[2] = dz / rr - uRef[2];
    for (let r = 0; r < 3; r++) {
      sum[r] += h[r];
      for (let c = 0; c < 3; c++) n[r * 3 + c] += h[r] * h[c];
    }
    m++;
  }
  if (correlated) {
    for (let r = 0; r < 3; r++) for (let c = 0; c < 3; c++) n[r * 3 + c] -= (sum[r] * sum[c]) / (m + 1);
  }
  const q = inverseDiagonal(n, 3);
  return q ? figures(q, false) : undefined;
}

/** DOP of two-way ranges to anchors from `p`: rows u_i^T, no offset. Needs at least 3 anchors. */
export function rangeDop(anchors: readonly Vec3_m[], p: Vec3_m): DopFigures | undefined {
  if (anchors.length < 3) return undefined;
  const n = new Float64Array(9);
  for (const s of anchors) {
    const u = unit(s, p);
    if (!u) return undefined;
    for (let r = 0; r < 3; r++) for (let c = 0; c < 3; c++) n[r * 3 + c] += u[r] * u[c];
  }
  const q = inverseDiagonal(n, 3);
  return q ? figures(q, false) : undefined;
}

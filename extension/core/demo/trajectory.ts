/**
 * The invented warehouse of the demo scene: its UWB anchors and the true flight of an inspection quadrotor.
 *
 * Conventions (stated once, here):
 * - Navigation frame ENU, metres: x along the aisles (0..40), y across them (0..24), z up (floor at 0).
 * - Racks stand between the aisles at y = 6, 12 and 18; the aisles are at y = 3, 9, 15 and 21, with cross aisles near
 *   x = 2 and x = 37.
 * - Attitude `nav_q_body` is a Hamilton quaternion, scalar first, rotating body vectors into ENU (geometry/quat.ts).
 *   The body frame is x forward, y left, z up (along the thrust).
 * - The flight is a closed loop through waypoints, repeated for as long as asked: a periodic cubic spline in time
 *   (continuous acceleration), so position, velocity and acceleration are exact derivatives of one curve.
 */
import { quatConjugate, quatMultiply, type QuatWXYZ } from '../geometry/quat';
import type { Anchor } from '../model';

/** Standard gravity, m/s^2 (common practice). */
export const GRAVITY_MPS2 = 9.80665;

/** The eight UWB anchors (ids 0..7), mounted on walls and racks at different heights, metres, ENU. */
export function warehouseAnchors(): Anchor[] {
  return [
    { id: '0', p: [0.3, 0.3, 7.8] },
    { id: '1', p: [20.0, 0.2, 3.1] },
    { id: '2', p: [39.7, 0.4, 7.2] },
    { id: '3', p: [39.6, 12.0, 2.4] },
    { id: '4', p: [39.8, 23.7, 6.9] },
    { id: '5', p: [21.5, 12.0, 5.4] }, // on top of the middle rack: the one that gets blocked
    { id: '6', p: [0.4, 23.6, 3.6] },
    { id: '7', p: [0.2, 12.1, 6.1] },
  ];
}

/** Waypoints of one inspection loop, metres, ENU: up and down the four aisles with climbs to the top shelves. */
const WAYPOINTS_M: ReadonlyArray<readonly [number, number, number]> = [
  [2.0, 3.0, 1.5], [12.0, 3.0, 2.5], [22.0, 3.0, 4.0], [32.0, 3.0, 3.0], [37.0, 4.0, 2.5],
  [37.0, 8.0, 2.5], [32.0, 9.0, 2.0], [20.0, 9.0, 5.0], [8.0, 9.0, 5.5], [3.0, 10.0, 4.5],
  [3.0, 14.0, 3.5], [8.0, 15.0, 2.5], [20.0, 15.0, 1.8], [32.0, 15.0, 3.2], [37.0, 16.0, 4.0],
  [37.0, 20.0, 6.0], [30.0, 21.0, 6.5], [18.0, 21.0, 4.0], [8.0, 21.0, 2.5], [2.0, 19.0, 2.0],
  [1.5, 12.0, 2.0], [1.8, 5.0, 1.6],
];

/** Cruise speed between waypoints, m/s. */
const CRUISE_MPS = 1.5;

/** Knot times (s) of the loop and the second derivatives (m/s^2) of the periodic cubic spline at each waypoint. */
interface Loop {
  knots_s: Float64Array; // n + 1 entries; knots_s[n] is the loop period
  second_mps2: Float64Array; // 3 per waypoint
  period_s: number;
}

/**
 * A periodic cubic spline through the waypoints (continuous acceleration, so the attitude derived from it is
 * continuous too). The cyclic tridiagonal system for the second derivatives M_k,
 * h_{k-1} M_{k-1} + 2 (h_{k-1} + h_k) M_k + h_k M_{k+1} = 6 ((P_{k+1} - P_k) / h_k - (P_k - P_{k-1}) / h_{k-1}),
 * is small (one row per waypoint) and solved once by dense Gaussian elimination.
 */
function buildLoop(): Loop {
  const n = WAYPOINTS_M.length;
  const knots_s = new Float64Array(n + 1);
  for (let k = 0; k < n; k++) {
    const a = WAYPOINTS_M[k], b = WAYPOINTS_M[(k + 1) % n];
    const d = Math.hypot(b[0] - a[0], b[1] - a[1], b[2] - a[2]);
    knots_s[k + 1] = knots_s[k] + Math.max(2, d / CRUISE_MPS);
  }
  const period_s = knots_s[n];
  const h = (k: number): number => knots_s[((k % n) + n) % n + 1] - knots_s[((k % n) + n) % n];
  const second_mps2 = new Float64Array(3 * n);
  for (let c = 0; c < 3; c++) {
    const A = new Float64Array(n * n);
    const rhs = new Float64Array(n);
    for (let k = 0; k < n; k++) {
      const hp = h(k - 1), hk = h(k);
      A[k * n + ((k + n - 1) % n)] += hp;
      A[k * n + k] += 2 * (hp + hk);
      A[k * n + ((k + 1) % n)] += hk;
      const P = (i: number): number => WAYPOINTS_M[((i % n) + n) % n][c];
      rhs[k] = 6 * ((P(k + 1) - P(k)) / hk - (P(k) - P(k - 1)) / hp);
    }
    const M = solveDense(A, rhs, n);
    for (let k = 0; k < n; k++) second_mps2[3 * k + c] = M[k];
  }
  return { knots_s, second_mps2, period_s };
}

/** Gaussian elimination with partial pivoting (the matrix is diagonally dominant; pivoting is for safety). */
function solveDense(A: Float64Array, b: Float64Array, n: number): Float64Array {
  for (let col = 0; col < n; col++) {
    let piv = col;
    for (let r = col + 1; r < n; r++) if (Math.abs(A[r * n + col]) > Math.abs(A[piv * n + col])) piv = r;
    if (piv !== col) {
      for (let c = 0; c < n; c++) { const t = A[col * n + c]; A[col * n + c] = A[piv * n + c]; A[piv * n + c] = t; }
      const t = b[col]; b[col] = b[piv]; b[piv] = t;
    }
    for (let r = col + 1; r < n; r++) {
      const f = A[r * n + col] / A[col * n + col];
      if (f === 0) continue;
      for (let c = col; c < n; c++) A[r * n + c] -= f * A[col * n + c];
      b[r] -= f * b[col];
    }
  }
  const x = new Float64Array(n);
  for (let r = n - 1; r >= 0; r--) {
    let s = b[r];
    for (let c = r + 1; c < n; c++) s -= A[r * n + c] * x[c];
    x[r] = s / A[r * n + r];
  }
  return x;
}

const LOOP = buildLoop();

/** Period of one inspection loop, seconds. */
export function warehouseLoopPeriod(): number {
  return LOOP.period_s;
}

/** The true state at one instant. Arrays are reused by `warehouseTruth` (pass the same object in a loop). */
export interface TruthSample {
  /** Position, m, ENU. */
  p_m: Float64Array;
  /** Velocity, m/s, ENU. */
  v_mps: Float64Array;
  /** Acceleration, m/s^2, ENU (kinematic, without gravity). */
  a_mps2: Float64Array;
  /** Attitude nav_q_body, scalar first. */
  nav_q_body: Float64Array;
}

/** Allocate a truth sample to be filled by `warehouseTruth`. */
export function createTruthSample(): TruthSample {
  return { p_m: new Float64Array(3), v_mps: new Float64Array(3), a_mps2: new Float64Array(3), nav_q_body: new Float64Array(4) };
}

/**
 * Fill `out` with the true position, velocity, acceleration and attitude at time t_s (seconds from the start of the
 * flight; the loop repeats). The attitude tilts the thrust axis along acceleration plus gravity and points the nose
 * along the horizontal velocity, as a multirotor does. Returns `out`.
 */
export function warehouseTruth(t_s: number, out: TruthSample): TruthSample {
  const { knots_s, second_mps2, period_s } = LOOP;
  const n = WAYPOINTS_M.length;
  let tl = t_s % period_s;
  if (tl < 0) tl += period_s;
  let k = 0;
  while (k < n - 1 && knots_s[k + 1] <= tl) k++;
  const k1 = (k + 1) % n;
  const h = knots_s[k + 1] - knots_s[k];
  const u = tl - knots_s[k], w = knots_s[k + 1] - tl; // time since the knot and until the next
  const P0 = WAYPOINTS_M[k], P1 = WAYPOINTS_M[k1];
  for (let c = 0; c < 3; c++) {
    const M0 = second_mps2[3 * k + c], M1 = second_mps2[3 * k1 + c];
    const A = P0[c] / h - (M0 * h) / 6, B = P1[c] / h - (M1 * h) / 6;
    out.p_m[c] = (M0 * w * w * w + M1 * u * u * u) / (6 * h) + A * w + B * u;
    out.v_mps[c] = (-M0 * w * w + M1 * u * u) / (2 * h) - A + B;
    out.a_mps2[c] = (M0 * w + M1 * u) / h;
  }
  attitudeFromMotion(out.v_mps, out.a_mps2, out.nav_q_body);
  return out;
}

/** Attitude of a multirotor: body z along (a + g e_z), body x toward the horizontal velocity. Writes nav_q_body. */
function attitudeFromMotion(v_mps: Float64Array, a_mps2: Float64Array, q: Float64Array): void {
  let zx = a_mps2[0], zy = a_mps2[1], zz = a_mps2[2] + GRAVITY_MPS2;
  const zn = Math.hypot(zx, zy, zz);
  zx /= zn; zy /= zn; zz /= zn;
  const yaw = Math.atan2(v_mps[1], v_mps[0]);
  const cx = Math.cos(yaw), cy = Math.sin(yaw);
  // y_b = normalize(z_b x c), c = (cx, cy, 0)
  let yx = -zz * cy, yy = zz * cx, yz = zx * cy - zy * cx;
  const yn = Math.hypot(yx, yy, yz);
  yx /= yn; yy /= yn; yz /= yn;
  // x_b = y_b x z_b
  const xx = yy * zz - yz * zy, xy = yz * zx - yx * zz, xz = yx * zy - yy * zx;
  quatFromColumns(xx, xy, xz, yx, yy, yz, zx, zy, zz, q);
}

/** Quaternion (scalar first) of the rotation matrix whose columns are the body axes in nav (Shepperd's method). */
function quatFromColumns(
  r00: number, r10: number, r20: number, r01: number, r11: number, r21: number, r02: number, r12: number, r22: number,
  q: Float64Array,
): void {
  const tr = r00 + r11 + r22;
  if (tr > 0) {
    const s = 2 * Math.sqrt(tr + 1);
    q[0] = s / 4; q[1] = (r21 - r12) / s; q[2] = (r02 - r20) / s; q[3] = (r10 - r01) / s;
  } else if (r00 > r11 && r00 > r22) {
    const s = 2 * Math.sqrt(1 + r00 - r11 - r22);
    q[0] = (r21 - r12) / s; q[1] = s / 4; q[2] = (r01 + r10) / s; q[3] = (r02 + r20) / s;
  } else if (r11 > r22) {
    const s = 2 * Math.sqrt(1 + r11 - r00 - r22);
    q[0] = (r02 - r20) / s; q[1] = (r01 + r10) / s; q[2] = s / 4; q[3] = (r12 + r21) / s;
  } else {
    const s = 2 * Math.sqrt(1 + r22 - r00 - r11);
    q[0] = (r10 - r01) / s; q[1] = (r02 + r20) / s; q[2] = (r12 + r21) / s; q[3] = s / 4;
  }
  if (q[0] < 0) { q[0] = -q[0]; q[1] = -q[1]; q[2] = -q[2]; q[3] = -q[3]; }
}

const scratchA = createTruthSample();
const scratchB = createTruthSample();
const scratchQ = new Float64Array(4);

/**
 * True body angular rate at t_s, rad/s, body frame: a central difference of the attitude over 1 ms,
 * omega = 2 vec(q(t-h/2)* ⊗ q(t+h/2)) / h. Writes `out` and returns it.
 */
export function warehouseBodyRate(t_s: number, out: Float64Array): Float64Array {
  const h = 1e-3;
  warehouseTruth(t_s - h / 2, scratchA);
  warehouseTruth(t_s + h / 2, scratchB);
  const qa: QuatWXYZ = scratchA.nav_q_body;
  quatConjugate(scratchQ, qa);
  quatMultiply(scratchQ, scratchQ, scratchB.nav_q_body);
  const sign = scratchQ[0] < 0 ? -1 : 1;
  out[0] = (2 * sign * scratchQ[1]) / h;
  out[1] = (2 * sign * scratchQ[2]) / h;
  out[2] = (2 * sign * scratchQ[3]) / h;
  return out;
}

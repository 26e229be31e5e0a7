/**
 * Position fixes from TDOA measurements alone: a linearized least-squares solution (Chan and Ho 1994, first
 * stage; Gillette and Silverman 2008), the minimal 4-anchor case as a quadratic in the reference range (Fang 1990
 * gives the planar exact case), then Gauss-Newton refinement on the nonlinear range differences.
 *
 * Model: anchors s_k, tag p, ranges r_k = |p - s_k|. A TDOA measurement of the pair (i, j) is the range difference
 * d = r_j - r_i (metres; times of flight multiplied by the propagation speed). Against one reference anchor s_0,
 * with a_k = s_k - s_0, x = p - s_0 and d_k = r_k - r_0, squaring r_k = r_0 + d_k gives
 *     2 a_k^T x + 2 d_k r_0 = |a_k|^2 - d_k^2,
 * linear in (x, r_0): 4 unknowns, so at least 4 differences (5 anchors) for the linear LS in 3-D. With exactly
 * 3 differences x = u - v r_0 and |x|^2 = r_0^2 gives (v^T v - 1) r_0^2 - 2 u^T v r_0 + u^T u = 0: two roots, of
 * which only r_0 >= 0 (and r_k >= 0) can be physical.
 */
import { gaussNewton, type RefinedPosition } from './gaussNewton';
import { solveLeastSquares } from './lsq';
import { isFiniteVec3, norm3, type Vec3_m } from './vec3';

/** One TDOA measurement: range difference d_j - d_i between anchors i and j (indices into the anchor array), metres. */
export interface TdoaObservation {
  i: number;
  j: number;
  d_m: number;
}

/** A TDOA solution: position and the range to the reference anchor. */
export interface TdoaSolution {
  p: Vec3_m;
  rRef_m: number;
}

/**
 * Linearized LS fix. `anchors[0]` is the reference; `dRef_m[k - 1] = r_k - r_0` for k = 1..n-1. Needs n >= 5
 * anchors; undefined for fewer or for rank-deficient geometry (e.g. coplanar anchors).
 */
export function tdoaLinearFix(anchors: readonly Vec3_m[], dRef_m: ArrayLike<number>): TdoaSolution | undefined {
  const n = anchors.length;
  if (n < 5 || dRef_m.length < n - 1) return undefined;
  const m = n - 1;
  const A = new Float64Array(m * 4);
  const b = new Float64Array(m);
  const s0 = anchors[0];
  for (let k = 1; k < n; k++) {
    const a0 = anchors[k][0] - s0[0];
    const a1 = anchors[k][1] - s0[1];
    const a2 = anchors[k][2] - s0[2];
    const d = dRef_m[k - 1];
    const row = (k - 1) * 4;
    A[row] = 2 * a0;
    A[row + 1] = 2 * a1;
    A[row + 2] = 2 * a2;
    A[row + 3] = 2 * d;
    b[k - 1] = a0 * a0 + a1 * a1 + a2 * a2 - d * d;
  }
  const x = solveLeastSquares(A, b, m, 4);
  if (!x) return undefined;
  return { p: [x[0] + s0[0], x[1] + s0[1], x[2] + s0[2]], rRef_m: x[3] };
}

/** Roots and physical solutions of the minimal case ({@link tdoaMinimalFix}). */
export interface TdoaMinimalResult {
  /** Real roots r_0 of the quadratic, descending (a negative discriminant from noise is clipped to a double root). */
  roots: number[];
  /** Solutions for the roots with r_0 >= 0 and every r_k = r_0 + d_k >= 0 (1e-9 relative slack). */
  solutions: TdoaSolution[];
}

/**
 * Minimal 3-D TDOA fix from 4 anchors (`anchors[0]` the reference, `dRef_m` the 3 differences r_k - r_0).
 * Undefined when the three baselines are coplanar (no unique x for a given r_0).
 */
export function tdoaMinimalFix(anchors: readonly Vec3_m[], dRef_m: ArrayLike<number>): TdoaMinimalResult | undefined {
  if (anchors.length !== 4 || dRef_m.length < 3) return undefined;
  const s0 = anchors[0];
  const A = new Float64Array(9);
  const g = new Float64Array(3);
  const h = new Float64Array(3);
  for (let k = 1; k < 4; k++) {
    const a = [anchors[k][0] - s0[0], anchors[k][1] - s0[1], anchors[k][2] - s0[2]];
    const d = dRef_m[k - 1];
    for (let c = 0; c < 3; c++) A[(k - 1) * 3 + c] = 2 * a[c];
    g[k - 1] = a[0] * a[0] + a[1] * a[1] + a[2] * a[2] - d * d;
    h[k - 1] = 2 * d;
  }
  const u = solveLeastSquares(A.slice(), g, 3, 3);
  const v = solveLeastSquares(A, h, 3, 3);
  if (!u || !v) return undefined;
  const qa = v[0] * v[0] + v[1] * v[1] + v[2] * v[2] - 1;
  const qb = -2 * (u[0] * v[0] + u[1] * v[1] + u[2] * v[2]);
  const qc = u[0] * u[0] + u[1] * u[1] + u[2] * u[2];
  const roots: number[] = [];
  if (Math.abs(qa) <= 1e-12 * Math.max(1, Math.abs(qb))) {
    if (qb !== 0) roots.push(-qc / qb);
  } else {
    const disc = qb * qb - 4 * qa * qc;
    if (disc <= 0) {
      roots.push(-qb / (2 * qa));
    } else {
      // Numerically stable pair of roots (common practice).
      const q = -0.5 * (qb + Math.sign(qb || 1) * Math.sqrt(disc));
      roots.push(q / qa);
      if (q !== 0) roots.push(qc / q);
    }
  }
  roots.sort((x, y) => y - x);
  const solutions: TdoaSolution[] = [];
  for (const r0 of roots) {
    if (!Number.isFinite(r0)) continue;
    const slack = 1e-9 * Math.max(1, Math.abs(r0));
    if (r0 < -slack) continue;
    let ok = true;
    for (let k = 0; k < 3; k++) if (r0 + dRef_m[k] < -slack) ok = false;
    if (!ok) continue;
    solutions.push({ p: [u[0] - v[0] * r0 + s0[0], u[1] - v[1] * r0 + s0[1], u[2] - v[2] * r0 + s0[2]], rRef_m: r0 });
  }
  return { roots, solutions };
}

/**
 * Gauss-Newton refinement on the pair measurements (residual d - (r_j - r_i), equal weights: each pair measurement
 * is taken as independent). Undefined with fewer than 3 measurements or singular geometry at the start.
 */
export function refineTdoa(anchors: readonly Vec3_m[], observations: readonly TdoaObservation[], p0: Vec3_m): RefinedPosition | undefined {
  const m = observations.length;
  return gaussNewton(
    (p, residual, jacobian) => {
      for (let k = 0; k < m; k++) {
        const { i, j, d_m } = observations[k];
        const si = anchors[i];
        const sj = anchors[j];
        const ri = norm3(p[0] - si[0], p[1] - si[1], p[2] - si[2]);
        const rj = norm3(p[0] - sj[0], p[1] - sj[1], p[2] - sj[2]);
        if (!(ri > 0) || !(rj > 0)) return false;
        residual[k] = d_m - (rj - ri);
        for (let c = 0; c < 3; c++) jacobian[k * 3 + c] = (p[c] - sj[c]) / rj - (p[c] - si[c]) / ri;
      }
      return true;
    },
    m,
    p0,
  );
}

/** Differences against one reference anchor derived from arbitrary pairs ({@link referenceDifferences}). */
export interface ReferenceDifferences {
  /** Anchor indices reached, the reference first. */
  anchors: number[];
  /** r_k - r_ref for `anchors[1..]`, metres. */
  dRef_m: number[];
}

/**
 * Turn pair measurements (any pairs) into differences against one reference: the anchor in the most pairs is the
 * reference, and each reachable anchor's difference follows the first path found (breadth first). With pairs that
 * all share the reference this is exact; otherwise it is a starting point for {@link refineTdoa}.
 */
export function referenceDifferences(observations: readonly TdoaObservation[]): ReferenceDifferences | undefined {
  if (observations.length === 0) return undefined;
  const degree = new Map<number, number>();
  for (const o of observations) {
    degree.set(o.i, (degree.get(o.i) ?? 0) + 1);
    degree.set(o.j, (degree.get(o.j) ?? 0) + 1);
  }
  let ref = observations[0].i;
  for (const [a, k] of degree) if (k > (degree.get(ref) ?? 0) || (k === degree.get(ref) && a < ref)) ref = a;
  const delta = new Map<number, number>([[ref, 0]]);
  const order = [ref];
  for (let head = 0; head < order.length; head++) {
    const a = order[head];
    const da = delta.get(a) ?? 0;
    for (const o of observations) {
      if (o.i === a && !delta.has(o.j)) {
        delta.set(o.j, da + o.d_m);
        order.push(o.j);
      } else if (o.j === a && !delta.has(o.i)) {
        delta.set(o.i, da - o.d_m);
        order.push(o.i);
      }
    }
  }
  return { anchors: order, dRef_m: order.slice(1).map((a) => delta.get(a) ?? NaN) };
}

/** A TDOA fix with how it was obtained. */
export interface TdoaFix extends RefinedPosition {
  /** 'linear' (5 or more anchors), 'minimal' (4 anchors, root chosen) or 'prior' (started from the prior). */
  method: 'linear' | 'minimal' | 'prior';
  /** Number of distinct anchors in the measurements used. */
  anchorCount: number;
}

/**
 * A complete TDOA fix: initial solution (linear LS with 5 or more anchors, the minimal quadratic with 4, choosing
 * the root nearest `prior` when both are physical, or `prior` itself when the closed forms fail), then Gauss-Newton
 * on all measurements. Observations with an anchor lacking a finite position or a non-finite difference are left
 * out. Undefined when fewer than 4 anchors are connected or the fix does not converge.
 */
export function tdoaFix(anchors: readonly (Vec3_m | undefined)[], observations: readonly TdoaObservation[], prior?: Vec3_m): TdoaFix | undefined {
  const used = observations.filter((o) => o.i !== o.j && isFiniteVec3(anchors[o.i]) && isFiniteVec3(anchors[o.j]) && Number.isFinite(o.d_m));
  const star = referenceDifferences(used);
  if (!star || star.anchors.length < 4) return undefined;
  const reached = new Set(star.anchors);
  const connected = used.filter((o) => reached.has(o.i) && reached.has(o.j));
  if (connected.length < 3) return undefined;
  const positions = star.anchors.map((a) => anchors[a] as Vec3_m);
  let start: Vec3_m | undefined;
  let method: TdoaFix['method'] = 'linear';
  if (positions.length >= 5) {
    start = tdoaLinearFix(positions, star.dRef_m)?.p;
  } else {
    method = 'minimal';
    const minimal = tdoaMinimalFix(positions, star.dRef_m);
    const candidates = minimal?.solutions ?? [];
    if (candidates.length === 1) start = candidates[0].p;
    else if (candidates.length > 1 && isFiniteVec3(prior)) {
      start = candidates.reduce((best, c) => (dist2(c.p, prior) < dist2(best.p, prior) ? c : best)).p;
    }
  }
  if (!start && isFiniteVec3(prior)) {
    start = prior;
    method = 'prior';
  }
  if (!start) return undefined;
  const refined = refineTdoa(anchors as readonly Vec3_m[], connected, start);
  if (!refined || !refined.converged) return undefined;
  return { ...refined, method, anchorCount: star.anchors.length };
}

function dist2(a: Vec3_m, b: Vec3_m): number {
  return (a[0] - b[0]) ** 2 + (a[1] - b[1]) ** 2 + (a[2] - b[2]) ** 2;
}

/**
 * Position fixes from two-way ranges alone: linearized least squares by differencing the squared ranges against a
 * reference anchor (common practice), then Gauss-Newton on the ranges themselves.
 *
 * With a_k = s_k - s_0 and x = p - s_0: |x|^2 = r_0^2 and |x - a_k|^2 = r_k^2 give 2 a_k^T x = r_0^2 - r_k^2 + |a_k|^2,
 * linear in x: at least 3 differences (4 anchors) in 3-D. Three anchors leave a mirror ambiguity and are not used
 * for a closed-form start.
 */
import { gaussNewton, type RefinedPosition } from './gaussNewton';
import { solveLeastSquares } from './lsq';
import { isFiniteVec3, norm3, type Vec3_m } from './vec3';

/** One two-way range to anchor `anchor` (index into the anchor array), metres. */
export interface RangeObservation {
  anchor: number;
  r_m: number;
}

/** Linearized LS fix from ranges (`r_m[k]` to `anchors[k]`); needs 4 or more anchors; undefined for singular geometry. */
export function rangeLinearFix(anchors: readonly Vec3_m[], r_m: ArrayLike<number>): Vec3_m | undefined {
  const n = anchors.length;
  if (n < 4 || r_m.length < n) return undefined;
  const m = n - 1;
  const A = new Float64Array(m * 3);
  const b = new Float64Array(m);
  const s0 = anchors[0];
  const r0 = r_m[0];
  for (let k = 1; k < n; k++) {
    const a0 = anchors[k][0] - s0[0];
    const a1 = anchors[k][1] - s0[1];
    const a2 = anchors[k][2] - s0[2];
    A[(k - 1) * 3] = 2 * a0;
    A[(k - 1) * 3 + 1] = 2 * a1;
    A[(k - 1) * 3 + 2] = 2 * a2;
    b[k - 1] = r0 * r0 - r_m[k] * r_m[k] + a0 * a0 + a1 * a1 + a2 * a2;
  }
  const x = solveLeastSquares(A, b, m, 3);
  return x ? [x[0] + s0[0], x[1] + s0[1], x[2] + s0[2]] : undefined;
}

/** Gauss-Newton on ranges (residual r - |p - s|); undefined with fewer than 3 ranges or singular geometry. */
export function refineRange(anchors: readonly Vec3_m[], observations: readonly RangeObservation[], p0: Vec3_m): RefinedPosition | undefined {
  const m = observations.length;
  return gaussNewton(
    (p, residual, jacobian) => {
      for (let k = 0; k < m; k++) {
        const s = anchors[observations[k].anchor];
        const r = norm3(p[0] - s[0], p[1] - s[1], p[2] - s[2]);
        if (!(r > 0)) return false;
        residual[k] = observations[k].r_m - r;
        for (let c = 0; c < 3; c++) jacobian[k * 3 + c] = (p[c] - s[c]) / r;
      }
      return true;
    },
    m,
    p0,
  );
}

/** A range fix with how it was started. */
export interface RangeFix extends RefinedPosition {
  method: 'linear' | 'prior';
  anchorCount: number;
}

/**
 * A complete range fix: linear LS start (4 or more distinct anchors; a repeated anchor keeps its last range), or
 * `prior` when that fails, then Gauss-Newton. Undefined with fewer than 4 usable anchors or no convergence.
 */
export function rangeFix(anchors: readonly (Vec3_m | undefined)[], observations: readonly RangeObservation[], prior?: Vec3_m): RangeFix | undefined {
  const last = new Map<number, number>();
  for (const o of observations) if (isFiniteVec3(anchors[o.anchor]) && Number.isFinite(o.r_m) && o.r_m >= 0) last.set(o.anchor, o.r_m);
  if (last.size < 4) return undefined;
  const ids = [...last.keys()];
  const positions = ids.map((a) => anchors[a] as Vec3_m);
  const used: RangeObservation[] = ids.map((a) => ({ anchor: a, r_m: last.get(a) as number }));
  let start = rangeLinearFix(positions, used.map((o) => o.r_m));
  let method: RangeFix['method'] = 'linear';
  if (!start && isFiniteVec3(prior)) {
    start = prior;
    method = 'prior';
  }
  if (!start) return undefined;
  const refined = refineRange(anchors as readonly Vec3_m[], used, start);
  if (!refined || !refined.converged) return undefined;
  return { ...refined, method, anchorCount: ids.length };
}

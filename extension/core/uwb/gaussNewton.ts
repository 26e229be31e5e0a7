/**
 * Gauss-Newton refinement of a position from range-type measurements, shared by the TDOA and two-way-range fixes.
 * Each measurement k has a predicted value h_k(p) and a gradient; the step solves min |J dp - (z - h(p))| by QR
 * ({@link solveLeastSquares}) and is halved while the sum of squares grows (simple backtracking, common practice).
 */
import { solveLeastSquares } from './lsq';
import type { Vec3_m } from './vec3';

/** Measurement model: fills `residual[k] = z_k - h_k(p)` and the Jacobian row `jacobian[3k..3k+2] = dh_k/dp`. */
export type ResidualModel = (p: Vec3_m, residual: Float64Array, jacobian: Float64Array) => boolean;

/** Result of {@link gaussNewton}. */
export interface RefinedPosition {
  p: Vec3_m;
  /** Root mean square of the final residuals, metres. */
  rms_m: number;
  iterations: number;
  /** The last step was below 1e-6 m (relative to 1 + |p|). */
  converged: boolean;
}

/** Maximum Gauss-Newton iterations. */
const MAX_ITERATIONS = 30;

function sumSquares(r: Float64Array): number {
  let s = 0;
  for (let k = 0; k < r.length; k++) s += r[k] * r[k];
  return s;
}

/**
 * Minimise the sum of squared residuals of `model` over the position, starting at `p0`, for `m` measurements
 * (m >= 3). Returns undefined when the model cannot be evaluated or the geometry is rank-deficient at the start.
 */
export function gaussNewton(model: ResidualModel, m: number, p0: Vec3_m): RefinedPosition | undefined {
  if (m < 3) return undefined;
  const r = new Float64Array(m);
  const J = new Float64Array(m * 3);
  const rq = new Float64Array(m);
  const Jq = new Float64Array(m * 3);
  const Jw = new Float64Array(m * 3);
  const rw = new Float64Array(m);
  let p: [number, number, number] = [p0[0], p0[1], p0[2]];
  if (!model(p, r, J)) return undefined;
  let cost = sumSquares(r);
  let iterations = 0;
  let lastStep = Infinity;
  for (; iterations < MAX_ITERATIONS; iterations++) {
    Jw.set(J);
    rw.set(r);
    const step = solveLeastSquares(Jw, rw, m, 3);
    if (!step) return iterations === 0 ? undefined : finish(false);
    let scale = 1;
    let accepted = false;
    for (let halvings = 0; halvings < 12; halvings++, scale /= 2) {
      const q: [number, number, number] = [p[0] + scale * step[0], p[1] + scale * step[1], p[2] + scale * step[2]];
      if (!model(q, rq, Jq)) continue;
      const c = sumSquares(rq);
      if (c <= cost * (1 + 1e-12) || halvings === 11) {
        lastStep = scale * Math.sqrt(step[0] * step[0] + step[1] * step[1] + step[2] * step[2]);
        p = q;
        r.set(rq);
        J.set(Jq);
        cost = c;
        accepted = true;
        break;
      }
    }
    if (!accepted) break;
    if (lastStep <= 1e-13 * (1 + norm(p))) {
      iterations++;
      break;
    }
  }
  return finish(lastStep <= 1e-6 * (1 + norm(p)));

  function finish(converged: boolean): RefinedPosition {
    return { p, rms_m: Math.sqrt(cost / m), iterations, converged };
  }
}

function norm(p: Vec3_m): number {
  return Math.sqrt(p[0] * p[0] + p[1] * p[1] + p[2] * p[2]);
}

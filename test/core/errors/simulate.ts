/**
 * Seeded simulations of our own for the NEES tests: a filter's error modelled as a stationary Gaussian AR(1)
 * process per axis, e(k) = a e(k-1) + sqrt(1 - a^2) sigma w(k), with the logged sigma equal to the true one
 * (a consistent run) unless a scale is applied over an interval.
 */
import { gaussian, seededRandom } from '../geometry/helpers';
import { navLog, stateStream } from './fixtures';
import type { NavLog } from '../../../extension/core/model';

/** Options of {@link simulateRun}. */
export interface SimOptions {
  seed: number;
  epochs?: number;
  dt_s?: number;
  /** AR(1) coefficient per step. */
  a?: number;
  sigma_m?: number;
  /** Logged sigma multiplied by `factor` for t in [t0, t1] (covariance scaled by factor^2). */
  scaled?: { t0: number; t1: number; factor: number };
}

/** A log with estimate positions, ground truth (`gt_`) and logged sigmas. */
export function simulateRun(o: SimOptions): NavLog {
  const n = o.epochs ?? 6000, dt = o.dt_s ?? 0.1, a = o.a ?? 0.9, sigma = o.sigma_m ?? 0.5;
  const g = gaussian(seededRandom(o.seed));
  const t = new Float64Array(n);
  const cols: Record<string, Float64Array> = {};
  for (const k of ['p_x', 'p_y', 'p_z', 'gt_p_x', 'gt_p_y', 'gt_p_z', 'sigma_p_x', 'sigma_p_y', 'sigma_p_z']) cols[k] = new Float64Array(n);
  const e = [g() * sigma, g() * sigma, g() * sigma];
  const b = Math.sqrt(1 - a * a) * sigma;
  for (let k = 0; k < n; k++) {
    t[k] = 100 + k * dt;
    if (k > 0) for (let c = 0; c < 3; c++) e[c] = a * e[c] + b * g();
    const truth = [Math.cos(t[k] / 20) * 30, Math.sin(t[k] / 20) * 30, 1.5];
    const f = o.scaled && t[k] >= o.scaled.t0 && t[k] <= o.scaled.t1 ? o.scaled.factor : 1;
    ['x', 'y', 'z'].forEach((ax, c) => {
      cols[`gt_p_${ax}`][k] = truth[c];
      cols[`p_${ax}`][k] = truth[c] - e[c];
      cols[`sigma_p_${ax}`][k] = sigma * f;
    });
  }
  return navLog(stateStream(t, cols));
}

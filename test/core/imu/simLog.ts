/**
 * Our own simulated estimator logs for the bias tests (invented scenario: a warehouse robot's filter at rest).
 * Each bias axis is estimated by a scalar Kalman filter (random-walk state, direct noisy measurement), so the logged
 * estimate converges from a wrong initial value, then tracks; its corrections are gain x innovation.
 */
import type { NavLog } from '../../../extension/core/model';
import { normalRng } from './rng';

/** What to inject into the true bias. */
export interface SimOptions {
  seed: number;
  duration_s?: number;
  rate_Hz?: number;
  /** A step in the true bias. */
  step?: { sensor: 'gyro' | 'accel'; axis: number; t_s: number; size: number };
  /** A linear drift in the true bias (SI units per second). */
  drift?: { sensor: 'gyro' | 'accel'; axis: number; rate: number };
  /** Log the 1-sigma columns (default true). */
  sigma?: boolean;
}

/** Measurement noise, filter random walk, true random walk, initial truth per sensor (SI). */
const SENSOR = {
  gyro: { r: 0.01, qK: 1e-3, trueK: 1e-5, b0: [0.03, -0.02, 0.01], p0: 0.05 },
  accel: { r: 0.05, qK: 5e-3, trueK: 5e-5, b0: [0.2, -0.1, 0.15], p0: 0.5 },
};

/** Build a NavLog whose state stream carries bg_* and ba_* (and sigma_* unless disabled). */
export function simulateBiasLog(o: SimOptions): NavLog {
  const rate = o.rate_Hz ?? 100;
  const dt = 1 / rate;
  const n = Math.round((o.duration_s ?? 300) * rate);
  const t = new Float64Array(n);
  const line = new Float64Array(n);
  for (let i = 0; i < n; i++) { t[i] = 1000 + i * dt; line[i] = i + 2; }
  const columns = new Map<string, Float64Array>();
  const rnd = normalRng(o.seed);
  for (const sensor of ['gyro', 'accel'] as const) {
    const p = SENSOR[sensor];
    for (let a = 0; a < 3; a++) {
      const est = new Float64Array(n);
      const sig = new Float64Array(n);
      let truth = p.b0[a];
      let x = 0;
      let P = p.p0 * p.p0;
      const R = p.r * p.r;
      const Q = p.qK * p.qK * dt;
      for (let i = 0; i < n; i++) {
        truth += p.trueK * Math.sqrt(dt) * rnd();
        if (o.drift && o.drift.sensor === sensor && o.drift.axis === a) truth += o.drift.rate * dt;
        const stepNow = o.step && o.step.sensor === sensor && o.step.axis === a && Math.abs(t[i] - 1000 - o.step.t_s) < dt / 2;
        if (stepNow && o.step) truth += o.step.size;
        // predict, update
        P += Q;
        const z = truth + p.r * rnd();
        const K = P / (P + R);
        x += K * (z - x);
        P *= 1 - K;
        est[i] = x;
        sig[i] = Math.sqrt(P);
      }
      const name = sensor === 'gyro' ? 'bg' : 'ba';
      columns.set(`${name}_${'xyz'[a]}`, est);
      if (o.sigma !== false) columns.set(`sigma_${name}_${'xyz'[a]}`, sig);
    }
  }
  return {
    path: 'sim.csv', format: 'csv', rows: n, meta: {},
    state: { t_s: t, line, file: 'sim.csv', length: n, columns },
    channels: [], anchors: [], anchorIds: [], resets: [], files: ['sim.csv'],
    conventions: { attitudeErrorSide: 'nav' }, diagnostics: [],
  };
}

/**
 * A seeded simulation of our own: a real Kalman filter (so its covariance behaves as a filter's does, not as an
 * invented curve), three independent axes of a constant-velocity model driven by white acceleration noise and a
 * position measurement every epoch. Textbook model (common practice):
 *   F = [[1, dt], [0, 1]],  Q = q [[dt^3/3, dt^2/2], [dt^2/2, dt]],  H = [1, 0],  R = r^2.
 * The filter is initialised consistently (x0 = truth + N(0, P0), P0 = diag(p0, v0)); a re-initialisation at
 * `resetAt_s` does the same again (the covariance goes back to P0; that epoch logs the fresh state, no update).
 * Logged per epoch: the posterior state, its sigmas, the truth (`gt_`), and the channel `pos` (dof 3) with the
 * innovation and its covariance S = H P- H' + R of each update.
 */
import { gaussian, seededRandom } from '../geometry/helpers';
import type { Channel, NavLog } from '../../../extension/core/model';
import { navLog, stateStream } from '../errors/fixtures';

/** Options of {@link simulateKf}. */
export interface KfOptions {
  seed: number;
  epochs?: number;
  dt_s?: number;
  /** Acceleration noise density, m^2/s^3. */
  q?: number;
  /** Measurement sigma, m. */
  r_m?: number;
  /** Initial variances of position (m^2) and velocity (m^2/s^2). */
  p0?: number;
  v0?: number;
  /** Re-initialise the filter at the first epoch at or after this time, seconds. */
  resetAt_s?: number;
  /**
   * No measurement in [t0, t1] (the filter only predicts) and no state record in [t0, t1): a logger writing at
   * updates; the record at t1 is the prediction after the outage.
   */
  outage_s?: [number, number];
}

/** The simulated log (times from 0, lines from 2: a header on line 1). */
export function simulateKf(o: KfOptions): NavLog {
  const n = o.epochs ?? 1200, dt = o.dt_s ?? 0.1, q = o.q ?? 0.05, r = o.r_m ?? 1, p0 = o.p0 ?? 25, v0 = o.v0 ?? 4;
  const g = gaussian(seededRandom(o.seed));
  const R = r * r;
  const Q = [q * dt ** 3 / 3, q * dt ** 2 / 2, q * dt];
  const cq = chol2(Q[0], Q[1], Q[2]);
  const t = new Float64Array(n);
  const names = ['p_x', 'p_y', 'p_z', 'v_x', 'v_y', 'v_z'];
  const cols: Record<string, Float64Array> = {};
  for (const k of names) for (const pre of ['', 'gt_', 'sigma_']) cols[pre + k] = new Float64Array(n);
  const axes = ['x', 'y', 'z'];
  // per axis: truth [p, v], estimate [p, v], covariance [pp, pv, vv]
  const truth = axes.map(() => [0, 1]);
  const est = axes.map(() => [0, 0]);
  const P = axes.map(() => [p0, 0, v0]);
  const chT: number[] = [], chLine: number[] = [], nu: number[] = [], S: number[] = [];
  let resetDone = o.resetAt_s === undefined;
  for (let k = 0; k < n; k++) {
    t[k] = k * dt;
    const reinit = k === 0 || (!resetDone && t[k] >= (o.resetAt_s as number));
    if (reinit && k > 0) resetDone = true;
    const nuRow: number[] = [], sRow: number[] = [];
    for (let a = 0; a < 3; a++) {
      const x = truth[a];
      if (k > 0) {
        const w0 = g(), w1 = g();
        x[0] = x[0] + dt * x[1] + cq[0] * w0;
        x[1] = x[1] + cq[1] * w0 + cq[2] * w1;
      }
      const e = est[a], c = P[a];
      if (reinit) {
        e[0] = x[0] + Math.sqrt(p0) * g();
        e[1] = x[1] + Math.sqrt(v0) * g();
        c[0] = p0; c[1] = 0; c[2] = v0;
      } else if (o.outage_s && t[k] >= o.outage_s[0] && t[k] <= o.outage_s[1] + 1e-9) {
        // predict only
        e[0] = e[0] + dt * e[1];
        const pp = c[0] + 2 * dt * c[1] + dt * dt * c[2] + Q[0];
        const pv = c[1] + dt * c[2] + Q[1];
        c[0] = pp; c[1] = pv; c[2] = c[2] + Q[2];
      } else {
        // predict
        e[0] = e[0] + dt * e[1];
        const pp = c[0] + 2 * dt * c[1] + dt * dt * c[2] + Q[0];
        const pv = c[1] + dt * c[2] + Q[1];
        const vv = c[2] + Q[2];
        // update with z = p + noise
        const z = x[0] + r * g();
        const s = pp + R;
        const innov = z - e[0];
        const k0 = pp / s, k1 = pv / s;
        e[0] += k0 * innov; e[1] += k1 * innov;
        c[0] = pp - k0 * pp; c[1] = pv - k0 * pv; c[2] = vv - k1 * pv;
        nuRow.push(innov); sRow.push(s);
      }
      cols[`gt_p_${axes[a]}`][k] = x[0]; cols[`gt_v_${axes[a]}`][k] = x[1];
      cols[`p_${axes[a]}`][k] = e[0]; cols[`v_${axes[a]}`][k] = e[1];
      cols[`sigma_p_${axes[a]}`][k] = Math.sqrt(c[0]); cols[`sigma_v_${axes[a]}`][k] = Math.sqrt(c[2]);
    }
    if (nuRow.length === 3) {
      chT.push(t[k]); chLine.push(k + 2);
      nu.push(...nuRow);
      S.push(sRow[0], 0, 0, 0, sRow[1], 0, 0, 0, sRow[2]);
    }
  }
  const m = chT.length;
  if (o.outage_s) {
    const [a, b] = o.outage_s;
    const keep: number[] = [];
    for (let k = 0; k < n; k++) if (!(t[k] >= a && t[k] < b)) keep.push(k);
    for (const key of Object.keys(cols)) cols[key] = Float64Array.from(keep, (k) => cols[key][k]);
    const lines = Float64Array.from(keep, (k) => k + 2);
    const state = stateStream(Float64Array.from(keep, (k) => t[k]), cols, 'kf.csv');
    state.line = lines;
    const channel0: Channel = {
      name: 'pos', dof: 3, t_s: Float64Array.from(chT), line: Float64Array.from(chLine), file: 'kf.csv', length: m,
      nu: Float64Array.from(nu), S: Float64Array.from(S), id: new Float64Array(m).fill(NaN), ids: [],
      rejected: new Uint8Array(m), angleComponents: [false, false, false],
    };
    return navLog(state, undefined, { channels: [channel0], path: 'kf.csv', files: ['kf.csv'] });
  }
  const channel: Channel = {
    name: 'pos', dof: 3, t_s: Float64Array.from(chT), line: Float64Array.from(chLine), file: 'kf.csv', length: m,
    nu: Float64Array.from(nu), S: Float64Array.from(S), id: new Float64Array(m).fill(NaN), ids: [],
    rejected: new Uint8Array(m), angleComponents: [false, false, false],
  };
  return navLog(stateStream(t, cols, 'kf.csv'), undefined, { channels: [channel], path: 'kf.csv', files: ['kf.csv'] });
}

/** Lower Cholesky factor [l00, l10, l11] of [[a, b], [b, c]]. */
function chol2(a: number, b: number, c: number): [number, number, number] {
  const l00 = Math.sqrt(a);
  const l10 = b / l00;
  return [l00, l10, Math.sqrt(Math.max(0, c - l10 * l10))];
}

/** The same log written as a wide CSV (for the CLI and the editor tests): state, truth, sigmas and channel `pos`. */
export function kfCsv(log: NavLog): string {
  const s = log.state;
  const names = ['p_x', 'p_y', 'p_z', 'v_x', 'v_y', 'v_z'];
  const header = ['t', ...names, ...names.map((x) => `sigma_${x}`), ...names.map((x) => `gt_${x}`),
    'nu_pos_0', 'nu_pos_1', 'nu_pos_2', 's_pos_0_0', 's_pos_1_1', 's_pos_2_2'];
  const ch = log.channels[0];
  const byLine = new Map<number, number>();
  for (let i = 0; i < ch.length; i++) byLine.set(ch.line[i], i);
  const rows = [header.join(',')];
  for (let k = 0; k < s.length; k++) {
    const cells = [s.t_s[k].toFixed(2)];
    for (const pre of ['', 'sigma_', 'gt_']) for (const x of names) cells.push((s.columns.get(pre + x) as Float64Array)[k].toPrecision(10));
    const i = byLine.get(s.line[k]);
    if (i === undefined) cells.push('', '', '', '', '', '');
    else {
      for (let c = 0; c < 3; c++) cells.push(ch.nu[i * 3 + c].toPrecision(10));
      for (let c = 0; c < 3; c++) cells.push((ch.S as Float64Array)[i * 9 + c * 4].toPrecision(10));
    }
    rows.push(cells.join(','));
  }
  return rows.join('\n') + '\n';
}

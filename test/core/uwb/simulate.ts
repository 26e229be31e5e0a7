/**
 * A seeded UWB simulation of our own for the stage tests (invented greenhouse scene, not a published data set):
 * 8 anchors, a tag on a slow figure-eight at 1.2 m, an estimate = truth + white N(0, sigma_est^2) per axis, TDOA
 * pairs cycled round-robin (or two-way ranges cycled through the anchors), optional faults.
 *
 * TDOA raw record: d = r_j - r_i + n, n ~ N(0, sigma^2). Update: nu = d - h(estimate), S = sigma^2 + H P H^T with
 * P = sigma_est^2 I, so nu ~ N(0, S) when nothing is wrong (the estimate error is independent of the noise).
 */
import type { Anchor, Channel, NavLog, RangeStream, StateStream, TdoaStream } from '../../../extension/core/model';
import { makeSeededRandom } from '../../../extension/core/stats/seededRandom';
import type { Vec3_m } from '../../../extension/core/uwb/vec3';

/** Greenhouse anchors, metres, ENU (invented). */
export const GREENHOUSE_ANCHORS: Vec3_m[] = [
  [0, 0, 2.8], [20, 0, 0.4], [20, 15, 2.6], [0, 15, 0.5], [10, -1, 1.6], [21, 7.5, 1.9], [10, 16, 2.9], [-1, 7.5, 0.3],
];

/** Pairs cycled by the TDOA simulation: every anchor in 3 or more pairs. */
export const GREENHOUSE_PAIRS: [number, number][] = [
  [0, 1], [1, 2], [2, 3], [3, 0], [4, 6], [5, 7], [0, 5], [1, 6], [2, 7], [3, 4], [0, 2], [1, 3], [4, 5], [6, 7],
];

/** Options of {@link simulateUwb}. */
export interface SimOptions {
  seed?: number;
  duration_s?: number;
  kind?: 'tdoa' | 'range';
  /** Measurement rate, Hz (each record one pair or one anchor). */
  rate_hz?: number;
  sigma_m?: number;
  sigmaEst_m?: number;
  /** Anchor blocked between t0 and t1: its ranges read `bias_m` long and `share` of them `extra_m` more. */
  blocked?: { anchor: number; t0: number; t1: number; bias_m: number; share: number; extra_m: [number, number] };
  /** Constant range offset per anchor (clock bias), metres. */
  offsets?: Record<number, number>;
  /** Between t0 and t1 only links among these anchors are measured. */
  onlyAnchors?: { anchors: number[]; t0: number; t1: number };
  /** Anchor positions written to the log (default the true ones). */
  loggedAnchors?: Vec3_m[];
  /** Tag position override (static tag). */
  staticTag?: Vec3_m;
  /** Leave out what is not wanted. */
  withUpdates?: boolean;
  withRaw?: boolean;
  withTruth?: boolean;
  withEstimate?: boolean;
  anchors?: Vec3_m[];
  pairs?: [number, number][];
  tagHeight_m?: number;
}

/** True tag position at time t (figure-eight inside the greenhouse). */
export function tagAt(t: number, o: SimOptions): Vec3_m {
  if (o.staticTag) return o.staticTag;
  const w = (2 * Math.PI) / 40;
  return [10 + 7 * Math.sin(w * t), 7.5 + 5 * Math.sin(2 * w * t), o.tagHeight_m ?? 1.2];
}

/** Build a NavLog from the simulation. */
export function simulateUwb(options: SimOptions = {}): NavLog {
  const o = { seed: 1, duration_s: 100, kind: 'tdoa' as const, rate_hz: 40, sigma_m: 0.1, sigmaEst_m: 0.05, withUpdates: true, withRaw: true, withTruth: true, withEstimate: true, ...options };
  const rng = makeSeededRandom(o.seed);
  const anchors = o.anchors ?? GREENHOUSE_ANCHORS;
  const pairs = o.pairs ?? GREENHOUSE_PAIRS;
  const logged = o.loggedAnchors ?? anchors;
  const file = 'greenhouse.csv';
  // State at 20 Hz.
  const nState = Math.floor(o.duration_s * 20) + 1;
  const cols = new Map<string, Float64Array>();
  for (const k of ['p_x', 'p_y', 'p_z', 'gt_p_x', 'gt_p_y', 'gt_p_z']) cols.set(k, new Float64Array(nState));
  const st = new Float64Array(nState);
  for (let k = 0; k < nState; k++) {
    const t = k / 20;
    st[k] = t;
    const p = tagAt(t, o);
    ['x', 'y', 'z'].forEach((axis, c) => {
      cols.get(`gt_p_${axis}`)![k] = p[c];
      cols.get(`p_${axis}`)![k] = p[c] + o.sigmaEst_m * rng.normal();
    });
  }
  const stateCols = new Map<string, Float64Array>();
  if (o.withEstimate) for (const k of ['p_x', 'p_y', 'p_z']) stateCols.set(k, cols.get(k)!);
  if (o.withTruth) for (const k of ['gt_p_x', 'gt_p_y', 'gt_p_z']) stateCols.set(k, cols.get(k)!);
  const state: StateStream = { t_s: st, line: Float64Array.from(st, (_, k) => k + 2), file, length: nState, columns: stateCols };
  const estAt = (t: number): Vec3_m => {
    const k = Math.min(nState - 1, Math.round(t * 20));
    return [cols.get('p_x')![k], cols.get('p_y')![k], cols.get('p_z')![k]];
  };
  const nMeas = Math.floor(o.duration_s * o.rate_hz);
  const t = new Float64Array(nMeas), line = new Float64Array(nMeas), ii = new Float64Array(nMeas), jj = new Float64Array(nMeas), val = new Float64Array(nMeas);
  const nu = new Float64Array(nMeas), S = new Float64Array(nMeas), id = new Float64Array(nMeas), rej = new Uint8Array(nMeas);
  const ids: string[] = [];
  const idIndex = new Map<string, number>();
  let n = 0;
  let cycle = 0;
  const rangeErr = (a: number, time: number): number => {
    let e = o.offsets?.[a] ?? 0;
    const b = o.blocked;
    if (b && a === b.anchor && time >= b.t0 && time < b.t1) {
      e += b.bias_m;
      if (rng.uniform() < b.share) e += b.extra_m[0] + (b.extra_m[1] - b.extra_m[0]) * rng.uniform();
    }
    return e;
  };
  for (let k = 0; k < nMeas; k++) {
    const time = k / o.rate_hz + 0.003;
    let i: number;
    let j: number;
    for (;;) {
      if (o.kind === 'tdoa') [i, j] = pairs[cycle++ % pairs.length];
      else [i, j] = [cycle++ % anchors.length, -1];
      const only = o.onlyAnchors;
      if (!only || time < only.t0 || time >= only.t1) break;
      if (only.anchors.includes(i) && (j < 0 || only.anchors.includes(j))) break;
    }
    const p = tagAt(time, o);
    const e = estAt(time);
    const r = (q: Vec3_m, a: number): number => Math.hypot(q[0] - anchors[a][0], q[1] - anchors[a][1], q[2] - anchors[a][2]);
    let meas: number;
    let pred: number;
    let hph = 0;
    if (j >= 0) {
      meas = r(p, j) - r(p, i) + o.sigma_m * rng.normal() + rangeErr(j, time) - rangeErr(i, time);
      pred = r(e, j) - r(e, i);
      for (let c = 0; c < 3; c++) {
        const h = (e[c] - anchors[j][c]) / r(e, j) - (e[c] - anchors[i][c]) / r(e, i);
        hph += h * h * o.sigmaEst_m * o.sigmaEst_m;
      }
    } else {
      meas = r(p, i) + o.sigma_m * rng.normal() + rangeErr(i, time);
      pred = r(e, i);
      hph = o.sigmaEst_m * o.sigmaEst_m;
    }
    const key = j >= 0 ? `${i}-${j}` : `${i}`;
    if (!idIndex.has(key)) {
      idIndex.set(key, ids.length);
      ids.push(key);
    }
    t[n] = time;
    line[n] = 1000 + k;
    ii[n] = i;
    jj[n] = j;
    val[n] = meas;
    nu[n] = meas - pred;
    S[n] = o.sigma_m * o.sigma_m + hph;
    id[n] = idIndex.get(key)!;
    rej[n] = (nu[n] * nu[n]) / S[n] > 16 ? 1 : 0;
    n++;
  }
  const anchorIds = anchors.map((_, a) => String(a));
  const channels: Channel[] = [];
  if (o.withUpdates) {
    channels.push({
      t_s: t, line, file, length: n, name: o.kind === 'tdoa' ? 'tdoa' : 'uwb_range', dof: 1, nu, S, id, ids, rejected: rej, angleComponents: [false],
    });
  }
  let tdoa: TdoaStream | undefined;
  let ranges: RangeStream | undefined;
  if (o.withRaw) {
    if (o.kind === 'tdoa') tdoa = { t_s: t, line, file, length: n, i: ii, j: jj, d_m: val };
    else ranges = { t_s: t, line, file, length: n, anchor: ii, r_m: val };
  }
  const anchorList: Anchor[] = logged.map((p, a) => ({ id: String(a), p: [p[0], p[1], p[2]] }));
  return {
    path: file, format: 'csv', rows: n + nState, meta: {}, frame: 'ENU', state, channels, tdoa, ranges,
    anchors: anchorList, anchorIds, resets: [], files: [file], conventions: { attitudeErrorSide: 'nav' }, diagnostics: [],
  };
}

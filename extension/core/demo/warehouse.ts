/**
 * The demo scene: an invented quadrotor inspecting an invented warehouse among 8 UWB anchors, with the output of a
 * simple but plausible estimator, ground truth, a scalar TDOA channel, a 3-dof magnetometer channel, raw IMU and raw
 * TDOA records, and injected faults. Pure, seeded and deterministic: the same options give the same bytes.
 *
 * How the log is made (consistent by construction, so only the injected faults should stand out):
 * - Truth follows `trajectory.ts` at `rate_hz` (default 100 Hz). Gyro and accelerometer biases are constants plus a
 *   slow random walk.
 * - The estimator's 1-sigma values converge from a wide start to a steady state. Its errors (truth minus estimate)
 *   are N(0, sigma^2) per axis, drawn independently per epoch by default (`errorCorrelation_s` makes them a
 *   first-order Gauss-Markov process instead). Attitude error: R_err = R_true R_est^T = Exp(e), e ~ N(0, sigma_att^2)
 *   in the navigation frame. Bias estimate errors are slow (10 s Gauss-Markov), as bias estimates are.
 * - TDOA (channel `tdoa`, `tdoaRate_hz`, default 50 Hz) cycles through ten anchor pairs; id `i-j` is d_j - d_i. The
 *   raw record is the true difference plus noise n ~ N(0, R), R = (0.10 m)^2. The innovation is n + g with
 *   g ~ N(0, H P H^T) (H the TDOA gradient at the true position, P the position covariance), and S = R + H P H^T,
 *   so nu ~ N(0, S). The estimator rejects an update when nu^2 / S > 16 (its own 4-sigma gate).
 * - Magnetometer (channel `mag`, 3 dof, `magRate_hz`, default 10 Hz, microtesla): S = R_true D R_true^T with D the
 *   body-frame noise (sigmas 0.5, 0.7, 0.9 uT), so S has off-diagonal terms; nu = R_true D^(1/2) z. The CSV logs the
 *   upper triangle of S (`s_mag_0_0 s_mag_0_1 s_mag_0_2 s_mag_1_1 s_mag_1_2 s_mag_2_2`), JSON the full matrix.
 * - Raw IMU (`gyro_*` rad/s, `acc_*` m/s^2, body frame): true rate and specific force plus the true biases and white
 *   noise, at `imuRate_hz` (default: the state rate; 0 leaves them out).
 *
 * Injected faults (when `faults` is on; times are fractions of the duration T, snapped to the state grid, and
 * `warehouseFaults` returns them in seconds):
 * 1. nlos, 0.25 T to 0.42 T: anchor 5 is blocked by a rack. Its ranges read 0.45 m long, and 8% of its updates carry
 *    an extra 1 to 4 m. Pairs containing 5 (4-5, 5-6, 1-5) get the bias with their sign; the estimate is pulled
 *    0.25 m away from anchor 5 (position error toward it).
 * 2. gyro-bias-step, at 0.50 T: the true gyro z bias steps by +0.02 rad/s. The estimate follows with a 4 s lag and
 *    the yaw error grows meanwhile (peaking near 2 degrees).
 * 3. overconfident, 0.62 T to 0.74 T: the logged TDOA S is a quarter of the true one (NIS about 4 times too large).
 * 4. time-gap, at 0.82 T for 0.8 s: no record of any kind.
 * 5. bad-quaternion, at 0.91 T: one estimated quaternion is written with norm 1.25.
 */
import { quatExp, quatMultiply, quatRotate } from '../geometry/quat';
import type { Anchor } from '../model';
import { makeSeededRandom, type SeededRandom } from '../stats/seededRandom';
import {
  createTruthSample, warehouseAnchors, warehouseBodyRate, warehouseTruth, GRAVITY_MPS2,
} from './trajectory';

export { warehouseAnchors, warehouseTruth, warehouseLoopPeriod, createTruthSample, warehouseBodyRate, GRAVITY_MPS2 } from './trajectory';
export type { TruthSample } from './trajectory';

/** Output format of the generated log. */
export type DemoFormat = 'csv' | 'jsonl' | 'json';

/**
 * Which columns a wide CSV carries. `full`: everything (64 columns, the shipped demo). `bench`: the 49 columns of the
 * benchmark log (state, its sigmas for p, v, attitude, ground truth, both channels; no raw records, no bias sigmas),
 * compatible with the peer pandas script.
 */
export type DemoColumns = 'full' | 'bench';

/** Options of the warehouse generator (every field optional). */
export interface WarehouseOptions {
  /** Duration on the state grid, seconds (default 60). Ignored when `rows` is given. */
  duration_s?: number;
  /** Number of state epochs on the time grid (the time-gap fault drops some). Overrides `duration_s`. */
  rows?: number;
  /** State rate, Hz (default 100). */
  rate_hz?: number;
  /** TDOA update rate, Hz (default 50); rounded to a divisor of the state rate. */
  tdoaRate_hz?: number;
  /** Magnetometer update rate, Hz (default 10); rounded to a divisor of the state rate. */
  magRate_hz?: number;
  /** Raw IMU rate, Hz (default the state rate; 0 leaves raw IMU out). Ignored by the `bench` column set. */
  imuRate_hz?: number;
  /** Seed (default 7). */
  seed?: number;
  /** Inject the documented faults (default true). */
  faults?: boolean;
  /** Output format (default csv). */
  format?: DemoFormat;
  /** Column set (default full). JSON formats always carry every record kind of the set. */
  columns?: DemoColumns;
  /** Lines per yielded chunk (default 4096). */
  batchLines?: number;
  /** Correlation time of the position, velocity and attitude errors, seconds (default 0: independent per epoch). */
  errorCorrelation_s?: number;
  /** Time of the first epoch, seconds (default 0). */
  t0_s?: number;
  /** `# source:` metadata (default `src/filter/tdoa_update.cpp:120`, in demo/workspace). */
  source?: string;
}

/** One injected fault, in the log's time base. */
export interface WarehouseFault {
  kind: 'nlos' | 'gyro-bias-step' | 'overconfident' | 'time-gap' | 'bad-quaternion';
  /** Start, seconds. */
  t_s: number;
  /** End, seconds (intervals only; for the gap the first time that has records again). */
  tEnd_s?: number;
  /** Plain sentence. */
  description: string;
}

/**
 * Options of the shipped demo (`demo/warehouse-flight.csv`): 60 s of state at 100 Hz with every column, raw IMU
 * decimated to 20 Hz so that the file stays under 2 MB.
 */
export const DEMO_FLIGHT_OPTIONS: Readonly<WarehouseOptions> = Object.freeze({
  duration_s: 60, rate_hz: 100, tdoaRate_hz: 50, magRate_hz: 10, imuRate_hz: 20, seed: 7, faults: true,
  format: 'csv', columns: 'full',
});

/**
 * Options of the benchmark log: the `bench` column set (49 columns, six decimals as a `%.6f` logger writes them,
 * about 380 bytes a row), state at 100 Hz; pass `rows` (250,000 makes about 95 MB) and `format`.
 */
export const BENCH_OPTIONS: Readonly<WarehouseOptions> = Object.freeze({
  rate_hz: 100, tdoaRate_hz: 50, magRate_hz: 10, seed: 11, faults: true, columns: 'bench',
});

/** Options with every default applied. */
interface Resolved {
  rows: number; rate_hz: number; dt_s: number; tdoaEvery: number; magEvery: number; imuEvery: number;
  seed: number; faults: boolean; format: DemoFormat; columns: DemoColumns; batchLines: number; tau_s: number;
  t0_s: number; source: string; tDecimals: number;
}

function resolve(o: WarehouseOptions): Resolved {
  const rate_hz = o.rate_hz !== undefined && o.rate_hz > 0 ? o.rate_hz : 100;
  const rows = Math.max(1, Math.round(o.rows !== undefined ? o.rows : (o.duration_s ?? 60) * rate_hz));
  const every = (r: number | undefined, def: number): number =>
    r === 0 ? 0 : Math.max(1, Math.round(rate_hz / (r !== undefined && r > 0 ? r : def)));
  return {
    rows, rate_hz, dt_s: 1 / rate_hz,
    tdoaEvery: every(o.tdoaRate_hz, 50),
    magEvery: every(o.magRate_hz, 10),
    imuEvery: o.imuRate_hz === 0 || o.columns === 'bench' ? 0 : every(o.imuRate_hz, rate_hz),
    seed: o.seed ?? 7,
    faults: o.faults ?? true,
    format: o.format ?? 'csv',
    columns: o.columns ?? 'full',
    batchLines: Math.max(1, o.batchLines ?? 4096),
    tau_s: Math.max(0, o.errorCorrelation_s ?? 0),
    t0_s: o.t0_s ?? 0,
    source: o.source ?? 'src/filter/tdoa_update.cpp:120',
    tDecimals: o.columns === 'bench' ? 6 : Math.max(2, Math.ceil(Math.log10(rate_hz) - 1e-9)),
  };
}

/** Epoch indices of the faults on the state grid. */
interface FaultEpochs {
  nlos0: number; nlos1: number; step: number; over0: number; over1: number; gap0: number; gap1: number; badQ: number;
}

const NONE = -1;

function faultEpochs(r: Resolved): FaultEpochs {
  if (!r.faults) return { nlos0: NONE, nlos1: NONE, step: NONE, over0: NONE, over1: NONE, gap0: NONE, gap1: NONE, badQ: NONE };
  const at = (f: number): number => Math.round(f * r.rows);
  const gap0 = at(0.82);
  return {
    nlos0: at(0.25), nlos1: at(0.42), step: at(0.5), over0: at(0.62), over1: at(0.74),
    gap0, gap1: gap0 + Math.max(1, Math.round(0.8 * r.rate_hz)), badQ: at(0.91),
  };
}

/** NLOS bias on the range to the blocked anchor, m (fault 1). */
const NLOS_BIAS_M = 0.45;
/** Gyro z bias step, rad/s (fault 2). */
const GYRO_STEP_RADPS = 0.02;
/** Lag of the estimator's bias estimate, s. */
const BIAS_LAG_S = 4;
/** TDOA measurement noise, m (1 sigma). */
const TDOA_SIGMA_M = 0.1;
/** The estimator's own gate on nu^2 / S. */
const ESTIMATOR_GATE = 16;
/** Anchor pairs of the TDOA channel, in round-robin order; `i-j` measures d_j - d_i. */
const PAIRS: ReadonlyArray<readonly [number, number]> = [
  [0, 1], [1, 2], [2, 3], [3, 4], [4, 5], [5, 6], [6, 7], [7, 0], [1, 5], [3, 7],
];
const BLOCKED_ANCHOR = 5;

/** The faults injected with these options, in seconds (empty when `faults` is false). */
export function warehouseFaults(options: WarehouseOptions = {}): WarehouseFault[] {
  const r = resolve(options);
  if (!r.faults) return [];
  const f = faultEpochs(r);
  const t = (k: number): number => round(r.t0_s + k * r.dt_s, r.tDecimals);
  return [
    { kind: 'nlos', t_s: t(f.nlos0), tEnd_s: t(f.nlos1), description: `Anchor ${BLOCKED_ANCHOR} is blocked by a rack: its ranges read ${NLOS_BIAS_M} m long and 8% of its updates carry 1 to 4 m more (pairs 4-5, 5-6, 1-5).` },
    { kind: 'gyro-bias-step', t_s: t(f.step), description: `The true gyro z bias steps by +${GYRO_STEP_RADPS} rad/s; the estimate follows with a ${BIAS_LAG_S} s lag and the yaw error grows meanwhile.` },
    { kind: 'overconfident', t_s: t(f.over0), tEnd_s: t(f.over1), description: 'The logged TDOA innovation covariance S is a quarter of the true one (NIS about 4 times too large).' },
    { kind: 'time-gap', t_s: t(f.gap0), tEnd_s: t(f.gap1), description: `No record of any kind for ${round((f.gap1 - f.gap0) * r.dt_s, 3)} s.` },
    { kind: 'bad-quaternion', t_s: t(f.badQ), description: 'One estimated quaternion is written with norm 1.25.' },
  ];
}

function round(v: number, d: number): number {
  const k = 10 ** d;
  return Math.round(v * k) / k;
}

/** Column names of the wide CSV for these options, in order. */
export function warehouseColumns(options: WarehouseOptions = {}): string[] {
  const r = resolve(options);
  const xyz = (p: string): string[] => [`${p}_x`, `${p}_y`, `${p}_z`];
  const wxyz = (p: string): string[] => [`${p}_w`, `${p}_x`, `${p}_y`, `${p}_z`];
  const full = r.columns === 'full';
  const cols = ['t', ...xyz('p'), ...xyz('v'), ...wxyz('q'), ...xyz('bg'), ...xyz('ba'),
    ...xyz('sigma_p'), ...xyz('sigma_v'), ...xyz('sigma_att')];
  if (full) cols.push(...xyz('sigma_bg'), ...xyz('sigma_ba'));
  cols.push(...xyz('gt_p'), ...xyz('gt_v'), ...wxyz('gt_q'));
  cols.push('nu_tdoa', 's_tdoa', 'id_tdoa', 'rejected_tdoa');
  cols.push('nu_mag_0', 'nu_mag_1', 'nu_mag_2', 's_mag_0_0', 's_mag_0_1', 's_mag_0_2', 's_mag_1_1', 's_mag_1_2', 's_mag_2_2');
  if (full) {
    cols.push('tdoa_i', 'tdoa_j', 'tdoa');
    if (r.imuEvery > 0) cols.push('gyro_x', 'gyro_y', 'gyro_z', 'acc_x', 'acc_y', 'acc_z');
  }
  return cols;
}

/** Metadata of the log as `key -> value` (the CSV writes them as `# key: value` lines). */
export function warehouseMeta(options: WarehouseOptions = {}): Record<string, string> {
  const r = resolve(options);
  const meta: Record<string, string> = {
    scene: 'warehouse inspection flight (invented demo scene, generated)',
    generator: `residuum demo warehouse seed=${r.seed} rows=${r.rows} rate_hz=${r.rate_hz} faults=${r.faults ? 'on' : 'off'}`,
    frame: 'ENU',
    source: r.source,
  };
  for (const a of warehouseAnchors()) meta[`anchor ${a.id}`] = a.p.map((v) => v.toFixed(2)).join(' ');
  meta.units = 'SI (m, m/s, rad, rad/s, m/s^2); mag innovations in microtesla';
  return meta;
}

/** The anchors as a CSV file `id,x,y,z` (metres, ENU). */
export function anchorsCsv(anchors: Anchor[] = warehouseAnchors()): string {
  return 'id,x,y,z\n' + anchors.map((a) => `${a.id},${a.p[0].toFixed(2)},${a.p[1].toFixed(2)},${a.p[2].toFixed(2)}\n`).join('');
}

/** Everything simulated at one epoch (reused between epochs). */
interface Epoch {
  t_s: number;
  p: Float64Array; v: Float64Array; q: Float64Array; bg: Float64Array; ba: Float64Array;
  sp: Float64Array; sv: Float64Array; satt: Float64Array; sbg: Float64Array; sba: Float64Array;
  gp: Float64Array; gv: Float64Array; gq: Float64Array;
  hasTdoa: boolean; nuTdoa: number; sTdoa: number; pair: number; rejected: boolean; rawTdoa: number;
  hasMag: boolean; nuMag: Float64Array; sMag: Float64Array; // sMag row-major 3x3
  hasImu: boolean; gyro: Float64Array; acc: Float64Array;
}

function createEpoch(): Epoch {
  const f = (n: number): Float64Array => new Float64Array(n);
  return {
    t_s: 0, p: f(3), v: f(3), q: f(4), bg: f(3), ba: f(3), sp: f(3), sv: f(3), satt: f(3), sbg: f(3), sba: f(3),
    gp: f(3), gv: f(3), gq: f(4),
    hasTdoa: false, nuTdoa: 0, sTdoa: 0, pair: 0, rejected: false, rawTdoa: 0,
    hasMag: false, nuMag: f(3), sMag: f(9), hasImu: false, gyro: f(3), acc: f(3),
  };
}

/**
 * The simulation: call `step(k)` for k = 0, 1, 2 ... in order; it fills `epoch` and returns false for epochs that the
 * time-gap fault drops. Every random draw happens whatever the format or column set, so all forms carry the same
 * values.
 */
function makeSimulation(r: Resolved): { epoch: Epoch; step: (k: number) => boolean } {
  const rng: SeededRandom = makeSeededRandom(r.seed);
  const f = faultEpochs(r);
  const anchors = warehouseAnchors().map((a) => a.p);
  const e = createEpoch();
  const truth = createTruthSample();
  const rate = new Float64Array(3);
  const tmp3 = new Float64Array(3);
  const dq = new Float64Array(4);
  const zP = new Float64Array(3), zV = new Float64Array(3), zA = new Float64Array(3);
  const zBg = new Float64Array(3), zBa = new Float64Array(3);
  const bgTrue = new Float64Array([0.0021, -0.0013, 0.0008]);
  const baTrue = new Float64Array([0.045, -0.03, 0.06]);
  const bgRw = 2e-5 * Math.sqrt(r.dt_s), baRw = 2e-4 * Math.sqrt(r.dt_s);
  const gyroNoise = 2e-4 * Math.sqrt(r.rate_hz), accNoise = 2e-3 * Math.sqrt(r.rate_hz);
  const magSigma = [0.5, 0.7, 0.9];
  // AR(1) coefficients: errors of p, v, attitude (0 = white) and the slow bias-estimate errors.
  const a = r.tau_s > 0 ? Math.exp(-r.dt_s / r.tau_s) : 0;
  const b = Math.sqrt(1 - a * a);
  const aBias = Math.exp(-r.dt_s / 10), bBias = Math.sqrt(1 - aBias * aBias);
  let updates = 0;
  let prevQ0 = 1, prevQ1 = 0, prevQ2 = 0, prevQ3 = 0;
  let first = true;

  const step = (k: number): boolean => {
    const t = k * r.dt_s;
    e.t_s = r.t0_s + t;
    warehouseTruth(t, truth);
    // keep the quaternion sign continuous (q and -q are the same attitude; plots should not jump)
    const gq = truth.nav_q_body;
    if (!first && gq[0] * prevQ0 + gq[1] * prevQ1 + gq[2] * prevQ2 + gq[3] * prevQ3 < 0) {
      gq[0] = -gq[0]; gq[1] = -gq[1]; gq[2] = -gq[2]; gq[3] = -gq[3];
    }
    first = false;
    prevQ0 = gq[0]; prevQ1 = gq[1]; prevQ2 = gq[2]; prevQ3 = gq[3];
    e.gp.set(truth.p_m); e.gv.set(truth.v_mps); e.gq.set(gq);

    // true biases: random walk, plus the step
    for (let c = 0; c < 3; c++) {
      bgTrue[c] += bgRw * rng.normal();
      baTrue[c] += baRw * rng.normal();
    }
    const stepOn = f.step !== NONE && k >= f.step;
    const bgz = bgTrue[2] + (stepOn ? GYRO_STEP_RADPS : 0);

    // the estimator's sigmas: a wide start converging to a steady state
    const fast = Math.exp(-t / 4), slow = Math.exp(-t / 8);
    e.sp[0] = 0.05 + 0.9 * fast; e.sp[1] = 0.05 + 0.9 * fast; e.sp[2] = 0.08 + 1.2 * fast;
    e.sv[0] = 0.03 + 0.4 * fast; e.sv[1] = 0.03 + 0.4 * fast; e.sv[2] = 0.04 + 0.5 * fast;
    e.satt[0] = 0.006 + 0.05 * fast; e.satt[1] = 0.006 + 0.05 * fast; e.satt[2] = 0.015 + 0.2 * fast;
    for (let c = 0; c < 3; c++) {
      e.sbg[c] = 4e-4 + 0.01 * slow;
      e.sba[c] = 0.01 + 0.15 * slow;
    }

    // estimation errors (truth minus estimate)
    for (let c = 0; c < 3; c++) {
      zP[c] = a * zP[c] + b * rng.normal();
      zV[c] = a * zV[c] + b * rng.normal();
      zA[c] = a * zA[c] + b * rng.normal();
      const nb = rng.normal(), na = rng.normal();
      if (k === 0) { zBg[c] = nb; zBa[c] = na; } else { zBg[c] = aBias * zBg[c] + bBias * nb; zBa[c] = aBias * zBa[c] + bBias * na; }
    }
    const nlos = f.nlos0 !== NONE && k >= f.nlos0 && k < f.nlos1;
    // NLOS: the estimate is pushed away from the blocked anchor (error toward it), ramped over 2 s at both ends
    let pull = 0;
    if (nlos) pull = 0.25 * Math.min(1, (k - f.nlos0) * r.dt_s / 2, (f.nlos1 - k) * r.dt_s / 2);
    const a5 = anchors[BLOCKED_ANCHOR];
    const hx = a5[0] - truth.p_m[0], hy = a5[1] - truth.p_m[1];
    const hn = Math.hypot(hx, hy) || 1;
    e.p[0] = truth.p_m[0] - (e.sp[0] * zP[0] + pull * hx / hn);
    e.p[1] = truth.p_m[1] - (e.sp[1] * zP[1] + pull * hy / hn);
    e.p[2] = truth.p_m[2] - e.sp[2] * zP[2];
    for (let c = 0; c < 3; c++) e.v[c] = truth.v_mps[c] - e.sv[c] * zV[c];
    // bias step: the estimate lags; the yaw error integrates the unestimated part, then updates pull it back
    let lagZ = 0, yawExtra = 0;
    if (stepOn) {
      const since = (k - f.step) * r.dt_s;
      lagZ = GYRO_STEP_RADPS * Math.exp(-since / BIAS_LAG_S);
      yawExtra = GYRO_STEP_RADPS * BIAS_LAG_S * (1 - Math.exp(-since / BIAS_LAG_S)) * Math.exp(-since / 8);
    }
    e.bg[0] = bgTrue[0] - e.sbg[0] * zBg[0];
    e.bg[1] = bgTrue[1] - e.sbg[1] * zBg[1];
    e.bg[2] = bgz - e.sbg[2] * zBg[2] - lagZ;
    for (let c = 0; c < 3; c++) e.ba[c] = baTrue[c] - e.sba[c] * zBa[c];
    // attitude: R_true = Exp(err) R_est, so q_est = Exp(-err) ⊗ q_true
    tmp3[0] = -e.satt[0] * zA[0]; tmp3[1] = -e.satt[1] * zA[1]; tmp3[2] = -(e.satt[2] * zA[2] + yawExtra);
    quatExp(dq, tmp3);
    quatMultiply(e.q, dq, gq);

    // raw IMU (noise drawn at every epoch so every form carries the same values)
    const gn0 = rng.normal(), gn1 = rng.normal(), gn2 = rng.normal();
    const an0 = rng.normal(), an1 = rng.normal(), an2 = rng.normal();
    e.hasImu = r.imuEvery > 0 && k % r.imuEvery === 0;
    if (e.hasImu) {
      warehouseBodyRate(t, rate);
      e.gyro[0] = rate[0] + bgTrue[0] + gyroNoise * gn0;
      e.gyro[1] = rate[1] + bgTrue[1] + gyroNoise * gn1;
      e.gyro[2] = rate[2] + bgz + gyroNoise * gn2;
      // specific force in the body frame: R^T (a + g e_z)
      tmp3[0] = truth.a_mps2[0]; tmp3[1] = truth.a_mps2[1]; tmp3[2] = truth.a_mps2[2] + GRAVITY_MPS2;
      dq[0] = gq[0]; dq[1] = -gq[1]; dq[2] = -gq[2]; dq[3] = -gq[3];
      quatRotate(e.acc, dq, tmp3);
      e.acc[0] += baTrue[0] + accNoise * an0;
      e.acc[1] += baTrue[1] + accNoise * an1;
      e.acc[2] += baTrue[2] + accNoise * an2;
    }

    // TDOA update
    e.hasTdoa = r.tdoaEvery > 0 && k % r.tdoaEvery === 0;
    if (e.hasTdoa) {
      const n = TDOA_SIGMA_M * rng.normal();
      const zg = rng.normal(), uOut = rng.uniform(), sizeOut = rng.uniform();
      const pairIndex = updates % PAIRS.length;
      updates++;
      const [i, j] = PAIRS[pairIndex];
      const ai = anchors[i], aj = anchors[j];
      const p = truth.p_m;
      const di = Math.hypot(p[0] - ai[0], p[1] - ai[1], p[2] - ai[2]);
      const dj = Math.hypot(p[0] - aj[0], p[1] - aj[1], p[2] - aj[2]);
      let hph = 0;
      for (let c = 0; c < 3; c++) {
        const h = (p[c] - aj[c]) / dj - (p[c] - ai[c]) / di;
        const s = 1.2 * e.sp[c]; // prior sigma, a little wider than the posterior
        hph += h * h * s * s;
      }
      const sTrue = TDOA_SIGMA_M * TDOA_SIGMA_M + hph;
      let bias = 0;
      if (nlos && (i === BLOCKED_ANCHOR || j === BLOCKED_ANCHOR)) {
        const extra = NLOS_BIAS_M + (uOut < 0.08 ? 1 + 3 * sizeOut : 0);
        bias = j === BLOCKED_ANCHOR ? extra : -extra;
      }
      e.rawTdoa = dj - di + n + bias;
      e.nuTdoa = n + Math.sqrt(hph) * zg + bias;
      const over = f.over0 !== NONE && k >= f.over0 && k < f.over1;
      e.sTdoa = over ? sTrue / 4 : sTrue;
      e.pair = pairIndex;
      e.rejected = (e.nuTdoa * e.nuTdoa) / e.sTdoa > ESTIMATOR_GATE;
    }

    // magnetometer update: S = R D R^T, nu = R D^(1/2) z
    e.hasMag = r.magEvery > 0 && k % r.magEvery === 0;
    if (e.hasMag) {
      tmp3[0] = magSigma[0] * rng.normal(); tmp3[1] = magSigma[1] * rng.normal(); tmp3[2] = magSigma[2] * rng.normal();
      quatRotate(e.nuMag, gq, tmp3);
      const w = gq[0], x = gq[1], y = gq[2], z = gq[3];
      const R = [
        1 - 2 * (y * y + z * z), 2 * (x * y - w * z), 2 * (x * z + w * y),
        2 * (x * y + w * z), 1 - 2 * (x * x + z * z), 2 * (y * z - w * x),
        2 * (x * z - w * y), 2 * (y * z + w * x), 1 - 2 * (x * x + y * y),
      ];
      for (let row = 0; row < 3; row++) {
        for (let col = 0; col < 3; col++) {
          let s = 0;
          for (let m = 0; m < 3; m++) s += R[3 * row + m] * R[3 * col + m] * magSigma[m] * magSigma[m];
          e.sMag[3 * row + col] = s;
        }
      }
    }
    return !(f.gap0 !== NONE && k >= f.gap0 && k < f.gap1);
  };
  return { epoch: e, step };
}

const PAIR_IDS = PAIRS.map(([i, j]) => `${i}-${j}`);

/** Decimals per quantity: compact for the shipped demo, six everywhere (as a `%.6f` logger writes) for the bench set. */
interface Decimals { p: number; v: number; q: number; bg: number; ba: number; sp: number; sv: number; satt: number; sbg: number; sba: number; nu: number; s: number; mag: number; gyro: number; acc: number }

function decimalsFor(r: Resolved): Decimals {
  if (r.columns === 'bench') return { p: 6, v: 6, q: 6, bg: 6, ba: 6, sp: 6, sv: 6, satt: 6, sbg: 6, sba: 6, nu: 6, s: 8, mag: 6, gyro: 6, acc: 6 };
  return { p: 3, v: 3, q: 4, bg: 5, ba: 4, sp: 3, sv: 3, satt: 4, sbg: 5, sba: 3, nu: 4, s: 6, mag: 3, gyro: 4, acc: 3 };
}

/** Push the three components of v with d decimals. */
function push3(cells: string[], v: Float64Array, d: number): void {
  cells.push(v[0].toFixed(d), v[1].toFixed(d), v[2].toFixed(d));
}

/** Push n empty cells. */
function pushEmpty(cells: string[], n: number): void {
  for (let i = 0; i < n; i++) cells.push('');
}

// Cells are gathered in an array and joined: many times faster than growing a string by concatenation (measured).
function csvRow(e: Epoch, r: Resolved, D: Decimals, badQ: boolean, cells: string[]): string {
  cells.length = 0;
  const full = r.columns === 'full';
  const q = e.q, qs = badQ ? 1.25 : 1;
  cells.push(e.t_s.toFixed(r.tDecimals));
  push3(cells, e.p, D.p);
  push3(cells, e.v, D.v);
  cells.push((q[0] * qs).toFixed(D.q), (q[1] * qs).toFixed(D.q), (q[2] * qs).toFixed(D.q), (q[3] * qs).toFixed(D.q));
  push3(cells, e.bg, D.bg);
  push3(cells, e.ba, D.ba);
  push3(cells, e.sp, D.sp);
  push3(cells, e.sv, D.sv);
  push3(cells, e.satt, D.satt);
  if (full) {
    push3(cells, e.sbg, D.sbg);
    push3(cells, e.sba, D.sba);
  }
  push3(cells, e.gp, D.p);
  push3(cells, e.gv, D.v);
  cells.push(e.gq[0].toFixed(D.q), e.gq[1].toFixed(D.q), e.gq[2].toFixed(D.q), e.gq[3].toFixed(D.q));
  if (e.hasTdoa) cells.push(e.nuTdoa.toFixed(D.nu), e.sTdoa.toFixed(D.s), PAIR_IDS[e.pair], e.rejected ? '1' : '0');
  else pushEmpty(cells, 4);
  if (e.hasMag) {
    const S = e.sMag;
    push3(cells, e.nuMag, D.mag);
    cells.push(S[0].toFixed(D.s - 2), S[1].toFixed(D.s - 2), S[2].toFixed(D.s - 2), S[4].toFixed(D.s - 2), S[5].toFixed(D.s - 2), S[8].toFixed(D.s - 2));
  } else {
    pushEmpty(cells, 9);
  }
  if (full) {
    if (e.hasTdoa) cells.push(String(PAIRS[e.pair][0]), String(PAIRS[e.pair][1]), e.rawTdoa.toFixed(D.nu));
    else pushEmpty(cells, 3);
    if (r.imuEvery > 0) {
      if (e.hasImu) {
        push3(cells, e.gyro, D.gyro);
        push3(cells, e.acc, D.acc);
      } else {
        pushEmpty(cells, 6);
      }
    }
  }
  return cells.join(',') + '\n';
}

/** JSON records of one epoch, one per line, each without a trailing separator. */
function jsonRecords(e: Epoch, r: Resolved, D: Decimals, badQ: boolean, out: string[]): void {
  const full = r.columns === 'full';
  const a3 = (v: Float64Array, d: number): string => '[' + v[0].toFixed(d) + ',' + v[1].toFixed(d) + ',' + v[2].toFixed(d) + ']';
  const q4 = (v: Float64Array, s: number): string =>
    '[' + (v[0] * s).toFixed(D.q) + ',' + (v[1] * s).toFixed(D.q) + ',' + (v[2] * s).toFixed(D.q) + ',' + (v[3] * s).toFixed(D.q) + ']';
  const t = e.t_s.toFixed(r.tDecimals);
  let sigma = `"p":${a3(e.sp, D.sp)},"v":${a3(e.sv, D.sv)},"att":${a3(e.satt, D.satt)}`;
  if (full) sigma += `,"bg":${a3(e.sbg, D.sbg)},"ba":${a3(e.sba, D.sba)}`;
  out.push(`{"kind":"state","t":${t},"p":${a3(e.p, D.p)},"v":${a3(e.v, D.v)},"q":${q4(e.q, badQ ? 1.25 : 1)},`
    + `"bg":${a3(e.bg, D.bg)},"ba":${a3(e.ba, D.ba)},"sigma":{${sigma}},"gt":{"p":${a3(e.gp, D.p)},"v":${a3(e.gv, D.v)},"q":${q4(e.gq, 1)}}}`);
  if (e.hasTdoa) {
    out.push(`{"kind":"update","t":${t},"channel":"tdoa","id":"${PAIR_IDS[e.pair]}","nu":[${e.nuTdoa.toFixed(D.nu)}],`
      + `"S":[[${e.sTdoa.toFixed(D.s)}]],"rejected":${e.rejected}}`);
    if (full) out.push(`{"kind":"tdoa","t":${t},"i":"${PAIRS[e.pair][0]}","j":"${PAIRS[e.pair][1]}","d":${e.rawTdoa.toFixed(D.nu)}}`);
  }
  if (e.hasMag) {
    const S = e.sMag;
    const d = D.s - 2;
    const row = (i: number): string => '[' + S[3 * i].toFixed(d) + ',' + S[3 * i + 1].toFixed(d) + ',' + S[3 * i + 2].toFixed(d) + ']';
    out.push(`{"kind":"update","t":${t},"channel":"mag","nu":${a3(e.nuMag, D.mag)},"S":[${row(0)},${row(1)},${row(2)}],"rejected":false}`);
  }
  if (full && e.hasImu) out.push(`{"kind":"imu","t":${t},"gyro":${a3(e.gyro, D.gyro)},"acc":${a3(e.acc, D.acc)}}`);
}

/**
 * Generate the demo log as text chunks of about `batchLines` lines each (never one giant string), in the chosen
 * format: CSV with `# key: value` metadata and a header; JSON Lines with one record per line; JSON as
 * `{ "meta": {...}, "records": [...] }` with one record per line. Concatenating the chunks gives the file.
 */
export function* generateWarehouseLog(options: WarehouseOptions = {}): Generator<string, void, undefined> {
  const r = resolve(options);
  const f = faultEpochs(r);
  const meta = warehouseMeta(options);
  const sim = makeSimulation(r);
  // Lines are gathered in an array and joined once per chunk: appending hundreds of thousands of small strings to
  // one string builds a deep rope that costs more in garbage collection than the whole simulation.
  const lines: string[] = [];
  if (r.format === 'csv') {
    for (const [k, v] of Object.entries(meta)) lines.push(`# ${k}: ${v}\n`);
    lines.push(warehouseColumns(options).join(',') + '\n');
  } else if (r.format === 'json') {
    lines.push(`{"meta":${JSON.stringify(meta)},"records":[\n`);
  }
  const records: string[] = [];
  const cells: string[] = [];
  const D = decimalsFor(r);
  let firstRecord = true;
  for (let k = 0; k < r.rows; k++) {
    if (!sim.step(k)) continue;
    const badQ = k === f.badQ;
    if (r.format === 'csv') {
      lines.push(csvRow(sim.epoch, r, D, badQ, cells));
    } else {
      records.length = 0;
      jsonRecords(sim.epoch, r, D, badQ, records);
      for (const rec of records) {
        if (r.format === 'json') {
          lines.push(firstRecord ? rec : ',\n' + rec);
          firstRecord = false;
        } else {
          lines.push(rec + '\n');
        }
      }
    }
    if (lines.length >= r.batchLines) {
      yield lines.join('');
      lines.length = 0;
    }
  }
  if (r.format === 'json') lines.push('\n]}\n');
  if (lines.length > 0) yield lines.join('');
}

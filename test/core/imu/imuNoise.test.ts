import { describe, expect, it } from 'vitest';
import { analyzeBias } from '../../../extension/core/imu/index';
import { gyroTruthConsistency } from '../../../extension/core/imu/bias';
import { detectStaticSegments } from '../../../extension/core/imu/staticSegments';
import { resolveSettings } from '../../../extension/core/settings';
import type { ImuStream, NavLog } from '../../../extension/core/model';
import { quatExp, quatMultiply } from '../../../extension/core/geometry/quat';
import { normalRng } from './rng';

// Our own simulated raw IMU (invented scenario: a greenhouse cart that stands, is pushed, and stands again).
// White rate noise of density N_g and white specific-force noise of density N_a: by construction the Allan deviation
// is N / sqrt(tau) (IEEE Std 952-1997 Annex C relation, from memory, via reference-checks.md sec. 3.1).
const N_G = 0.005 * (Math.PI / 180); // rad/s/sqrt(Hz)  (MPU-6000 datasheet figure, reference-checks.md sec. 7.2)
const N_A = 400e-6 * 9.80665; // m/s^2/sqrt(Hz)

function simulateImu(seed: number, rate: number, duration_s: number, moving?: [number, number]): ImuStream {
  const n = Math.round(duration_s * rate);
  const dt = 1 / rate;
  const rnd = normalRng(seed);
  const cols = Array.from({ length: 6 }, () => new Float64Array(n));
  const t = new Float64Array(n);
  const line = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    t[i] = i * dt;
    line[i] = i + 2;
    const move = moving && t[i] >= moving[0] && t[i] < moving[1] ? 1 : 0;
    for (let a = 0; a < 3; a++) {
      cols[a][i] = 0.002 * (a + 1) + (N_G / Math.sqrt(dt)) * rnd() + move * 0.5 * Math.sin(2 * Math.PI * 0.7 * t[i] + a);
      cols[3 + a][i] = (a === 2 ? 9.81 : 0.05) + (N_A / Math.sqrt(dt)) * rnd() + move * 2 * Math.sin(2 * Math.PI * 1.3 * t[i] + a);
    }
  }
  return { t_s: t, line, file: 'imu.csv', length: n, gyro_x: cols[0], gyro_y: cols[1], gyro_z: cols[2], acc_x: cols[3], acc_y: cols[4], acc_z: cols[5] };
}

function emptyLog(imu?: ImuStream): NavLog {
  return {
    path: 'run.csv', format: 'csv', rows: imu?.length ?? 0, meta: {},
    state: { t_s: new Float64Array(0), line: new Float64Array(0), file: 'run.csv', length: 0, columns: new Map() },
    channels: [], anchors: [], anchorIds: [], resets: [], files: ['run.csv'], conventions: { attitudeErrorSide: 'nav' }, diagnostics: [],
    ...(imu ? { imu } : {}),
  };
}

describe('static segments', () => {
  it('finds the two standing stretches around a pushed one', () => {
    const imu = simulateImu(5, 100, 200, [80, 120]);
    const det = detectStaticSegments(imu, { gyroNoiseDensity: N_G, accNoiseDensity: N_A });
    expect(det.segments.length).toBe(2);
    expect(det.segments[0].t_s).toBeCloseTo(0, 6);
    expect(Math.abs(det.segments[0].tEnd_s - 80)).toBeLessThanOrEqual(1.01);
    expect(Math.abs(det.segments[1].t_s - 120)).toBeLessThanOrEqual(1.01);
    expect(Math.abs(det.segments[1].tEnd_s - 200)).toBeLessThanOrEqual(1.01);
  });
  it('works on a gyro-only record (accelerometer columns empty)', () => {
    const imu = simulateImu(4, 100, 200, [80, 120]);
    imu.acc_x.fill(NaN); imu.acc_y.fill(NaN); imu.acc_z.fill(NaN);
    const det = detectStaticSegments(imu, { gyroNoiseDensity: N_G });
    expect(det.segments.length).toBe(2);
  });
  it('finds none when the sensor never stands still', () => {
    const imu = simulateImu(6, 100, 60, [0, 60]);
    expect(detectStaticSegments(imu, { gyroNoiseDensity: N_G, accNoiseDensity: N_A }).segments).toEqual([]);
  });
});

describe('Allan deviation of the raw IMU in the stage', () => {
  it('reads N on the longest static stretch, per axis, in SI and datasheet units', () => {
    const imu = simulateImu(7, 100, 900, [100, 160]);
    const r = analyzeBias(emptyLog(imu), resolveSettings());
    const block = r.block!.imu!;
    expect(block.static.mode).toBe('detected');
    expect(block.static.segments.length).toBe(2);
    expect(block.static.used!.t).toBeGreaterThanOrEqual(159);
    expect(block.static.tau0).toBeCloseTo(0.01, 9);
    for (const ax of ['x', 'y', 'z'] as const) {
      const g = block.gyro![ax];
      // 5%: several points along the -1/2 line over 740 s of 100 Hz data
      expect(Math.abs(g.figures.N!.value / N_G - 1)).toBeLessThan(0.05);
      expect(Math.abs(block.accel![ax].figures.N!.value / N_A - 1)).toBeLessThan(0.05);
      // compared with the consumer preset (same N): ratio near 1
      expect(Math.abs(g.figures.N!.ratio! - 1)).toBeLessThan(0.05);
      const arw = g.figures.N!.datasheet.find((d) => d.unit === 'deg/sqrt(h)')!;
      expect(Math.abs(arw.value / 0.3 - 1)).toBeLessThan(0.05); // 0.005 deg/s/sqrt(Hz) x 60
      expect(g.tau.length).toBe(g.adev.length);
      for (let i = 0; i < g.tau.length; i++) expect(g.lo[i]).toBeLessThan(g.hi[i]);
    }
    const s = r.series.find((x) => x.key === 'allan/gyro/x')!;
    expect(s.logLog).toBe(true);
    expect(s.group).toBe('allan');
    expect(s.lo!.length).toBe(s.x.length);
    // no bias columns: no bias block
    expect(r.block!.bias).toBeUndefined();
  });
  it('uses the whole record when declared static, and compares with a given specification', () => {
    const imu = simulateImu(8, 200, 300);
    const settings = resolveSettings({ imuStatic: true, imuSpec: { gyroNoiseDensity: '0.001 deg/s/sqrt(Hz)' } });
    const r = analyzeBias(emptyLog(imu), settings);
    const block = r.block!.imu!;
    expect(block.static.mode).toBe('declared');
    expect(block.static.used!.samples).toBe(imu.length);
    expect(block.gyro!.x.figures.N!.ratio!).toBeGreaterThan(4);
    // N five times the specification: one note per gyro axis
    const notes = r.findings.filter((f) => f.kind === 'note' && f.channel === 'gyro-noise');
    expect(notes.map((f) => f.axis)).toEqual([0, 1, 2]);
    expect(notes[0].message).toContain('times the specification');
  });
  it('says why when no static stretch exists', () => {
    const imu = simulateImu(9, 100, 30, [0, 30]);
    const r = analyzeBias(emptyLog(imu), resolveSettings());
    expect(r.block!.imu!.gyro).toBeUndefined();
    expect(r.block!.imu!.notes.join()).toContain('no static stretch');
  });
});

describe('gyro minus bias against the ground-truth body rate', () => {
  it('recovers the true bias from raw gyro and a truth attitude', () => {
    // Constructed: constant body rate w, truth q(t) = q0 Exp(w t) (q rotates body to navigation, so the body rate
    // is Log(q_k^* q_{k+1}) / dt exactly); gyro = w + b_true + white noise.
    const w = [0.1, -0.2, 0.3];
    const bTrue = [0.01, -0.005, 0.002];
    const bLogged = [0.012, -0.005, 0.0];
    const imu = simulateImu(10, 100, 60);
    const rnd = normalRng(11);
    for (let i = 0; i < imu.length; i++) {
      imu.gyro_x[i] = w[0] + bTrue[0] + 1e-3 * rnd();
      imu.gyro_y[i] = w[1] + bTrue[1] + 1e-3 * rnd();
      imu.gyro_z[i] = w[2] + bTrue[2] + 1e-3 * rnd();
    }
    const n = 600; // truth and state at 10 Hz
    const t = new Float64Array(n);
    const cols = new Map<string, Float64Array>();
    const q = ['gt_q_w', 'gt_q_x', 'gt_q_y', 'gt_q_z'].map((k) => { const c = new Float64Array(n); cols.set(k, c); return c; });
    ['bg_x', 'bg_y', 'bg_z'].forEach((k, a) => cols.set(k, new Float64Array(n).fill(bLogged[a])));
    const q0 = new Float64Array([Math.cos(0.3), Math.sin(0.3), 0, 0]);
    const dq = new Float64Array(4);
    const qk = new Float64Array(4);
    for (let k = 0; k < n; k++) {
      t[k] = k * 0.1;
      quatExp(dq, [w[0] * t[k], w[1] * t[k], w[2] * t[k]]);
      quatMultiply(qk, q0, dq);
      for (let c = 0; c < 4; c++) q[c][k] = qk[c];
    }
    const log = emptyLog(imu);
    log.state = { t_s: t, line: new Float64Array(n), file: 'run.csv', length: n, columns: cols };
    const c = gyroTruthConsistency(log)!;
    expect(c.intervals).toBeGreaterThan(590);
    for (let a = 0; a < 3; a++) {
      // noise 1e-3 rad/s averaged over 6000 samples: about 1.3e-5 standard error
      expect(Math.abs(c.impliedBias[a] - bTrue[a])).toBeLessThan(1e-4);
      expect(Math.abs(c.residualMean[a] - (bTrue[a] - bLogged[a]))).toBeLessThan(1e-4);
      expect(c.loggedBias[a]).toBeCloseTo(bLogged[a], 12);
    }
    const r = analyzeBias(log, resolveSettings());
    expect(r.block!.bias!.gyro!.consistency!.intervals).toBe(c.intervals);
  });
});

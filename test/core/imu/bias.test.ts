import { describe, expect, it } from 'vitest';
import { analyzeBias } from '../../../extension/core/imu/index';
import { median, plausibleBiasChange, robustScale, theilSenSlope } from '../../../extension/core/imu/bias';
import { normalRng } from './rng';
import { resolveSettings } from '../../../extension/core/settings';
import { simulateBiasLog } from './simLog';

// Our own simulated estimator (test/core/imu/simLog.ts): a scalar Kalman filter per bias axis, 100 Hz, 300 s,
// log time starting at 1000 s. Expected values hold by construction of the simulation.

describe('bias step detection', () => {
  it('finds one injected gyro step after settling, with its time, axis and size', () => {
    const log = simulateBiasLog({ seed: 11, step: { sensor: 'gyro', axis: 1, t_s: 150, size: 0.02 } });
    const r = analyzeBias(log, resolveSettings());
    const steps = r.findings.filter((f) => f.kind === 'bias-step');
    expect(steps.length).toBe(1);
    const f = steps[0];
    expect(f.axis).toBe(1);
    expect(Math.abs((f.t as number) - 1150)).toBeLessThan(0.1);
    // size within 10%: the estimate converges to the new level with the filter's time constant (about 1 s)
    expect(Math.abs((f.size as number) - 0.02) / 0.02).toBeLessThan(0.1);
    expect(f.channel).toBe('gyro-bias');
    // the onset is where the CUSUM run began: the step epoch (index 15000) or a few epochs earlier when noise had
    // already started the run
    expect(Math.abs((f.line as number) - log.state.line[15000])).toBeLessThanOrEqual(5);
    const block = r.block!.bias!;
    expect(block.gyro!.steps.length).toBe(1);
    expect(block.gyro!.steps[0]).toMatchObject({ axis: 1 });
    expect(block.accel!.steps).toEqual([]);
    // settling is reported as settleTime, not as a step
    expect(block.gyro!.settleTime).toBeGreaterThan(0);
    expect(block.gyro!.settleTime).toBeLessThan(5);
    // the step is marked in its own series
    const marks = r.series.find((s) => s.key === 'bias/gyro/y/steps');
    expect(marks).toBeDefined();
    expect(marks!.x.length).toBe(1);
    expect(r.series.find((s) => s.key === 'bias/gyro/x')!.lo).toBeDefined();
    // the step exceeds what the consumer preset allows, but windows holding a detected step are not drift findings
    expect(r.findings.filter((x) => x.kind === 'bias-drift')).toEqual([]);
  });

  it('finds a downward accelerometer step', () => {
    const log = simulateBiasLog({ seed: 12, step: { sensor: 'accel', axis: 2, t_s: 200, size: -0.1 } });
    const r = analyzeBias(log, resolveSettings());
    const steps = r.findings.filter((f) => f.kind === 'bias-step');
    expect(steps.length).toBe(1);
    expect(steps[0].axis).toBe(2);
    expect(steps[0].channel).toBe('accel-bias');
    expect(Math.abs((steps[0].t as number) - 1200)).toBeLessThan(0.1);
    expect(Math.abs((steps[0].size as number) + 0.1) / 0.1).toBeLessThan(0.1);
  });

  it('finds no step and no drift in clean runs over several seeds', () => {
    for (const seed of [21, 22, 23, 24, 25, 26]) {
      const r = analyzeBias(simulateBiasLog({ seed }), resolveSettings());
      expect(r.findings.map((f) => f.message)).toEqual([]);
      const b = r.block!.bias!;
      expect(b.gyro!.settleTime).toBeLessThan(5);
      expect(b.accel!.settleTime).toBeLessThan(5);
      expect(b.gyro!.sigmaFinal!.every((v) => v !== null && v > 0)).toBe(true);
    }
  });
});

describe('logs with held values and gaps', () => {
  it('a bias held between updates (every 5th epoch) gives no false step, and the step is still found', () => {
    for (const [seed, step] of [[71, false], [72, true]] as const) {
      const log = simulateBiasLog({ seed, step: step ? { sensor: 'gyro', axis: 0, t_s: 150, size: 0.02 } : undefined });
      for (const col of log.state.columns.values()) for (let i = 0; i < col.length; i++) col[i] = col[i - (i % 5)];
      const found = analyzeBias(log, resolveSettings()).findings.filter((f) => f.kind === 'bias-step');
      expect(found.map((f) => f.axis)).toEqual(step ? [0] : []);
    }
  });
  it('a 3 s gap in the records is not a step', () => {
    const log = simulateBiasLog({ seed: 73 });
    const keep = (i: number): boolean => i < 20000 || i >= 20300;
    const n = log.state.length - 300;
    const cut = (a: Float64Array): Float64Array => Float64Array.from(Array.from(a).filter((_, i) => keep(i)));
    log.state = { ...log.state, t_s: cut(log.state.t_s), line: cut(log.state.line), length: n,
      columns: new Map([...log.state.columns].map(([k, v]) => [k, cut(v)])) };
    expect(analyzeBias(log, resolveSettings()).findings.filter((f) => f.kind === 'bias-step')).toEqual([]);
  });
});

describe('bias summary figures', () => {
  it('final, total change and drift per hour', () => {
    const rate = 1e-4; // rad/s per s = 0.36 rad/s per hour
    const log = simulateBiasLog({ seed: 31, drift: { sensor: 'gyro', axis: 0, rate } });
    const r = analyzeBias(log, resolveSettings());
    const g = r.block!.bias!.gyro!;
    const col = log.state.columns.get('bg_x')!;
    expect(g.final[0]).toBe(col[col.length - 1]);
    expect(g.totalChange[0]).toBeCloseTo(col[col.length - 1] - col[0], 15);
    // Theil-Sen after settling recovers the injected drift within 5% (truth random walk and filter noise)
    expect(Math.abs((g.driftPerHour[0] as number) / (rate * 3600) - 1)).toBeLessThan(0.05);
  });
  it('Theil-Sen slope ignores one gross outlier', () => {
    // Source: definition (median of pairwise slopes); constructed case
    const x = [0, 1, 2, 3, 4, 5, 6];
    const y = x.map((v) => 2 * v + 1);
    y[3] = 100;
    expect(theilSenSlope(x, y)).toBe(2);
  });
});

describe('robust helpers', () => {
  it('median by selection equals the median of the sorted values', () => {
    const rnd = normalRng(91);
    for (const len of [1, 2, 3, 4, 5, 10, 11, 1000, 1001]) {
      const v = Array.from({ length: len }, () => Math.round(rnd() * 3) + 0); // many ties (+ 0 turns -0 into 0)
      const s = [...v].sort((a, b) => a - b);
      const expected = len % 2 ? s[len >> 1] : (s[len / 2 - 1] + s[len / 2]) / 2;
      expect(median(v)).toBe(expected);
    }
    expect(median([])).toBeNaN();
  });
  it('robust scale is the standard deviation for normal data, also when coarsely rounded', () => {
    const rnd = normalRng(92);
    const v = Float64Array.from({ length: 20000 }, () => 2.4 * rnd());
    expect(Math.abs(robustScale(v, 0) / 2.4 - 1)).toBeLessThan(0.03);
    // rounded to integers (quantum 0.42 sigma): the scale stays within 5% of sqrt(sigma^2 + 1/12)
    const r = v.map((x) => Math.round(x));
    expect(Math.abs(robustScale(r, 0) / Math.sqrt(2.4 * 2.4 + 1 / 12) - 1)).toBeLessThan(0.05);
    // one wild value does not move it
    r[0] = 1e6;
    expect(Math.abs(robustScale(r, 0) / Math.sqrt(2.4 * 2.4 + 1 / 12) - 1)).toBeLessThan(0.05);
  });
});

describe('bias drift against the specification', () => {
  const rate = 2e-4; // rad/s per second: 0.06 rad/s over the run
  it('with a specification given in the settings (datasheet units)', () => {
    const log = simulateBiasLog({ seed: 41, drift: { sensor: 'gyro', axis: 2, rate } });
    const settings = resolveSettings({ imuSpec: { gyroBiasInstability: '10 deg/h', gyroRateRandomWalk: '20 deg/h/sqrt(h)', gyroNoiseDensity: '0.3 deg/sqrt(h)' } });
    const r = analyzeBias(log, settings);
    const drift = r.findings.filter((f) => f.kind === 'bias-drift');
    expect(drift.length).toBe(1);
    expect(drift[0].axis).toBe(2);
    expect(drift[0].message).toContain('the specification (settings+preset:consumer)');
    expect(drift[0].score).toBeGreaterThan(1);
    const spec = r.block!.bias!.spec;
    expect(spec.fieldOrigin.gyroBiasInstability).toBe('settings');
    expect(spec.fieldOrigin.accBiasInstability).toBe('preset:consumer');
    // 10 deg/h = 10 * pi / 180 / 3600 rad/s
    expect(spec.gyroBiasInstability).toBeCloseTo((10 * Math.PI) / 180 / 3600, 15);
    expect(spec.defaulted).toBe(false);
    expect(r.findings.filter((f) => f.kind === 'bias-step')).toEqual([]);
  });
  it('without a specification: the consumer default, said so in the finding', () => {
    const log = simulateBiasLog({ seed: 41, drift: { sensor: 'gyro', axis: 2, rate } });
    const r = analyzeBias(log, resolveSettings());
    const drift = r.findings.filter((f) => f.kind === 'bias-drift');
    expect(drift.length).toBe(1);
    expect(drift[0].message).toContain('no IMU specification given');
    expect(drift[0].message).toContain('consumer');
    expect(r.block!.bias!.spec.defaulted).toBe(true);
    expect(r.block!.bias!.spec.commonPractice).toContain('gyroRateRandomWalk');
  });
  it('a drift within the estimator\'s own uncertainty is not a finding, even against a tactical specification', () => {
    const slow = 4e-6; // rad/s per s: 1.2e-3 rad/s over the run, about the filter's own 1-sigma (1e-3 rad/s)
    const log = simulateBiasLog({ seed: 43, drift: { sensor: 'gyro', axis: 0, rate: slow } });
    const r = analyzeBias(log, resolveSettings({ imuPreset: 'tactical' }));
    expect(r.findings.filter((f) => f.kind === 'bias-drift')).toEqual([]);
    const d = r.block!.bias!.gyro!.drift[0]!;
    expect(d.ratio).toBeLessThan(1);
    // the threshold is dominated by 3 sqrt(2) sigma_final, not by the tactical K and B
    const sigma = r.block!.bias!.gyro!.sigmaFinal![0] as number;
    expect(d.threshold).toBeGreaterThan(3 * Math.SQRT2 * sigma);
    expect(r.block!.bias!.spec.origin).toBe('preset:tactical');
  });
  it('plausible change follows 3 sqrt(K^2 T + (0.664 B)^2)', () => {
    // Source: reference-checks.md sec. 7.2 (common practice), 0.664 = sqrt(2 ln 2 / pi) of sec. 3.1
    const K = 1e-5;
    const B = 1e-4;
    expect(plausibleBiasChange(100, K, B)).toBeCloseTo(3 * Math.sqrt(K * K * 100 + (0.6642824703 * B) ** 2), 12);
  });
});

describe('bad input', () => {
  it('an unknown unit in the settings is a finding, not a crash', () => {
    const log = simulateBiasLog({ seed: 51, duration_s: 60 });
    const r = analyzeBias(log, resolveSettings({ imuSpec: { gyroBiasInstability: '10 furlongs' }, biasStepAlpha: 2 }));
    const bad = r.findings.filter((f) => f.kind === 'bad-value').map((f) => f.message).join('\n');
    expect(bad).toContain('gyroBiasInstability');
    expect(bad).toContain('furlongs');
    expect(bad).toContain('biasStepAlpha');
    expect(r.block!.bias!.spec.fieldOrigin.gyroBiasInstability).toBe('preset:consumer');
  });
  it('a log without bias columns gives no bias block', () => {
    const log = simulateBiasLog({ seed: 52, duration_s: 10 });
    log.state.columns.clear();
    const r = analyzeBias(log, resolveSettings());
    expect(r.block).toBeUndefined();
    expect(r.findings).toEqual([]);
  });
  it('NaN holes and a constant column are handled', () => {
    const log = simulateBiasLog({ seed: 53, duration_s: 60 });
    const bx = log.state.columns.get('bg_x')!;
    for (let i = 100; i < 200; i++) bx[i] = NaN;
    log.state.columns.get('bg_y')!.fill(0.01);
    const r = analyzeBias(log, resolveSettings());
    const g = r.block!.bias!.gyro!;
    expect(g.final[1]).toBe(0.01);
    expect(g.totalChange[1]).toBe(0);
    expect(Number.isFinite(g.final[0] as number)).toBe(true);
  });
});

import { describe, expect, it } from 'vitest';
import { analyzeLog } from '../../../extension/core/analyze';
import { resolveSettings } from '../../../extension/core/settings';
import { reportProblems } from '../../helpers/reportSchema';
import { simulateBiasLog } from './simLog';
import { normalRng } from './rng';

describe('the IMU stage inside the whole report', () => {
  it('bias and imu blocks are schema-valid, finite, and carry the contract fields', () => {
    const log = simulateBiasLog({ seed: 81, duration_s: 120, step: { sensor: 'accel', axis: 0, t_s: 60, size: 0.1 } });
    // raw IMU at rest alongside (white noise), declared static
    const n = 12000;
    const rnd = normalRng(82);
    const col = (): Float64Array => Float64Array.from({ length: n }, () => 1e-3 * rnd());
    log.imu = { t_s: Float64Array.from({ length: n }, (_, i) => 1000 + i * 0.01), line: new Float64Array(n), file: 'sim.csv', length: n,
      gyro_x: col(), gyro_y: col(), gyro_z: col(), acc_x: col(), acc_y: col(), acc_z: col() };
    const { report, series } = analyzeLog(log, resolveSettings({ imuStatic: true }));
    expect(reportProblems(report)).toEqual([]);
    const bias = report.bias as { gyro: Record<string, unknown>; accel: { steps: { t: number; axis: number; size: number }[] } };
    for (const key of ['final', 'totalChange', 'driftPerHour', 'settleTime', 'sigmaFinal', 'steps']) expect(bias.gyro).toHaveProperty(key);
    expect(bias.accel.steps.map((s) => s.axis)).toEqual([0]);
    expect(report.findings.filter((f) => f.kind === 'bias-step').length).toBe(1);
    expect(report).toHaveProperty('imu.gyro.x.figures.N.value');
    expect(series.some((s) => s.key === 'allan/accel/z' && s.logLog)).toBe(true);
    expect(series.some((s) => s.key === 'bias/accel/x/steps')).toBe(true);
  });
});

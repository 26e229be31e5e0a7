import { describe, expect, it } from 'vitest';
import { analyzeBias } from '../../../extension/core/imu/index';
import { allanDeviation, allanDeviationNonOverlapping } from '../../../extension/core/imu/allan';
import { readNoiseFigures } from '../../../extension/core/imu/noiseFigures';
import { resolveSettings } from '../../../extension/core/settings';
import type { NavLog } from '../../../extension/core/model';
import { uniformRng } from './rng';

/** A log of n records whose values are drawn from a nasty mix (NaN, infinities, repeats, time going backwards). */
function nastyLog(seed: number, n: number): NavLog {
  const u = uniformRng(seed);
  const pick = (): number => {
    const r = u();
    if (r < 0.1) return NaN;
    if (r < 0.13) return r < 0.115 ? Infinity : -Infinity;
    if (r < 0.3) return 0.01;
    return (u() - 0.5) * 10 ** Math.floor(u() * 8 - 4);
  };
  const t = Float64Array.from({ length: n }, (_, i) => (u() < 0.05 ? i - 3 : i) * 0.01);
  const columns = new Map<string, Float64Array>();
  for (const k of ['bg_x', 'bg_y', 'bg_z', 'ba_x', 'sigma_bg_x', 'gt_q_w', 'gt_q_x', 'gt_q_y', 'gt_q_z']) columns.set(k, Float64Array.from({ length: n }, pick));
  const col = (): Float64Array => Float64Array.from({ length: n }, pick);
  return {
    path: 'x.csv', format: 'csv', rows: n, meta: {},
    state: { t_s: t, line: Float64Array.from({ length: n }, (_, i) => i + 1), file: 'x.csv', length: n, columns },
    imu: { t_s: t.slice(), line: new Float64Array(n), file: 'x.csv', length: n, gyro_x: col(), gyro_y: col(), gyro_z: col(), acc_x: col(), acc_y: col(), acc_z: col() },
    channels: [], anchors: [], anchorIds: [], resets: [], files: ['x.csv'], conventions: { attitudeErrorSide: 'nav' }, diagnostics: [],
  };
}

describe('bad data never stops the stage', () => {
  it('nasty logs of many sizes: no unexpected failure, every reported number finite or absent', () => {
    for (let seed = 1; seed <= 40; seed++) {
      const n = [0, 1, 2, 3, 5, 30, 200, 3000][seed % 8];
      for (const imuStatic of [false, true]) {
        const r = analyzeBias(nastyLog(seed, n), resolveSettings({ imuStatic }));
        // the stage's catch-all turns an unexpected exception into an error note: there must be none
        expect(r.findings.filter((f) => f.severity === 'error')).toEqual([]);
        for (const f of r.findings) for (const v of [f.t, f.size, f.score]) if (v !== undefined) expect(Number.isFinite(v)).toBe(true);
      }
    }
  });
  it('Allan estimators on degenerate input', () => {
    for (const y of [new Float64Array(0), new Float64Array([1]), new Float64Array([1, 2]), new Float64Array([NaN, NaN, 3]), new Float64Array(100).fill(5)]) {
      const a = allanDeviation(y, 0.01);
      const b = allanDeviationNonOverlapping(y, 0.01);
      expect(a.tau_s.length).toBe(a.adev.length);
      expect(b.tau_s.length).toBe(b.adev.length);
      readNoiseFigures(a, 'gyro');
    }
    // a constant series has zero Allan deviation at every tau
    const c = allanDeviation(new Float64Array(100).fill(5), 1);
    expect(Array.from(c.adev).every((v) => v === 0)).toBe(true);
    expect(readNoiseFigures(c, 'gyro').N).toBeUndefined();
    // a bad sample interval gives no point rather than nonsense
    expect(allanDeviation(new Float64Array([1, 2, 3, 4]), 0, [1, 2]).tau_s.length).toBe(0);
  });
});

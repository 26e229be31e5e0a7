/**
 * N-run Monte Carlo NEES and NIS (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4): bounds from reference-checks.md
 * sec 2.2 ([COMPUTED], tol 1e-4); runs are seeded simulations of our own.
 */
import { describe, expect, it } from 'vitest';
import { analyzeMonteCarlo, monteCarloSeries } from '../../../extension/core/errors/index';
import { resolveSettings } from '../../../extension/core/settings';
import type { Channel, NavLog } from '../../../extension/core/model';
import { simulateRun } from './simulate';
import { gaussian, seededRandom } from '../geometry/helpers';

function withNisChannel(log: NavLog, seed: number, sScale: number): NavLog {
  const g = gaussian(seededRandom(seed * 7 + 1));
  const n = 500;
  const t_s = Float64Array.from({ length: n }, (_, i) => 100 + i * 0.2);
  const S = new Float64Array(n).fill(0.04);
  const nu = Float64Array.from({ length: n }, () => g() * 0.2 * sScale);
  const ch: Channel = {
    name: 'range', dof: 1, nu, S, t_s, line: Float64Array.from({ length: n }, (_, i) => i + 2), file: 'run.csv', length: n,
    id: new Float64Array(n).fill(NaN), ids: [], rejected: new Uint8Array(n), angleComponents: [false],
  };
  return { ...log, channels: [ch] };
}

describe('analyzeMonteCarlo', () => {
  const settings = resolveSettings({});
  it('50 consistent runs: interval [2.3597, 3.7160] for 3 dof and about 95% of epochs inside; NIS [0.6471, 1.4284]', () => {
    const runs = Array.from({ length: 50 }, (_, i) => withNisChannel(simulateRun({ seed: 500 + i, epochs: 1000 }), i, 1));
    const mc = analyzeMonteCarlo(runs, settings);
    expect(mc.runs).toBe(50);
    const p = mc.nees.position;
    if (!p?.bounds95) throw new Error('no position');
    // Source: reference-checks.md sec 2.2, average NEES n_x = 3, N = 50
    expect(Math.abs(p.bounds95[0] - 2.3597)).toBeLessThan(1e-4);
    expect(Math.abs(p.bounds95[1] - 3.716)).toBeLessThan(1e-4);
    expect(p.epochs).toBe(1000);
    expect(p.inside95 as number).toBeGreaterThan(0.92);
    expect(p.inside95 as number).toBeLessThan(0.98);
    expect(Math.abs((p.mean as number) - 3)).toBeLessThan(0.15);
    const r = mc.nis.range;
    if (!r?.bounds95) throw new Error('no nis');
    // Source: reference-checks.md sec 2.2, average NIS n_z = 1, N = 50
    expect(Math.abs(r.bounds95[0] - 0.6471)).toBeLessThan(1e-4);
    expect(Math.abs(r.bounds95[1] - 1.4284)).toBeLessThan(1e-4);
    expect(r.inside95 as number).toBeGreaterThan(0.92);
    const series = monteCarloSeries(mc);
    const sp = series.find((x) => x.key === 'montecarlo/nees/position');
    expect(sp?.lo?.[0]).toBeCloseTo(2.3597, 4);
    expect(series.some((x) => x.key === 'montecarlo/nis/range')).toBe(true);
  });

  it('overconfident runs (covariance / 4) fall outside nearly everywhere', () => {
    const runs = Array.from({ length: 20 }, (_, i) =>
      withNisChannel(simulateRun({ seed: 900 + i, epochs: 500, scaled: { t0: 0, t1: 1e9, factor: 0.5 } }), i, 2));
    const mc = analyzeMonteCarlo(runs, settings);
    expect(mc.nees.position?.inside95 as number).toBeLessThan(0.05);
    expect(mc.nees.position?.mean as number).toBeGreaterThan(10);
    expect(mc.nis.range?.inside95 as number).toBeLessThan(0.05);
  });

  it('epochs are aligned by time; a run with a shorter span contributes only where it has epochs', () => {
    const runs = [simulateRun({ seed: 1, epochs: 1000 }), simulateRun({ seed: 2, epochs: 500 })];
    const mc = analyzeMonteCarlo(runs, settings);
    const p = mc.nees.position;
    if (!p) throw new Error('no position');
    expect(p.runs[10]).toBe(2);
    expect(p.runs[800]).toBe(1);
    expect(p.hi[800]).toBeGreaterThan(p.hi[10]); // fewer runs, wider interval
  });
});

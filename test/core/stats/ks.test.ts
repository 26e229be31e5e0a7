import { describe, expect, it } from 'vitest';
import { kolmogorovSf, ksTest } from '../../../extension/core/stats/ks';
import { oneSampleTTest } from '../../../extension/core/stats/ttest';
import { chi2Cdf } from '../../../extension/core/stats/chi2';
import { jStat, stdlibKstest } from './references';
import { makeRng } from '../consistency/rng';

function chiSquareSample(seed: number, n: number, dof: number, scale = 1): Float64Array {
  const rng = makeRng(seed);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let k = 0; k < dof; k++) { const z = rng.normal(); s += z * z; }
    out[i] = s * scale;
  }
  return out;
}

describe('Kolmogorov-Smirnov against @stdlib/stats-kstest', () => {
  const cases: [number, number, number, number][] = [
    // seed, n, dof, scale
    [1, 50, 1, 1], [2, 200, 1, 1], [3, 500, 3, 1], [4, 1000, 2, 1], [5, 300, 1, 1.3], [6, 800, 3, 0.8],
    [7, 2000, 1, 1], [8, 100, 6, 1.5],
  ];
  for (const [seed, n, dof, scale] of cases) {
    it(`seed ${seed}, n ${n}, chi-square(${dof}) x ${scale}`, () => {
      const x = chiSquareSample(seed, n, dof, scale);
      const cdf = (v: number): number => chi2Cdf(v, dof);
      const ours = ksTest(x, cdf);
      // Source: @stdlib/stats-kstest (exact Marsaglia-Tsang-Wang p-value).
      const ref = stdlibKstest(x, cdf);
      expect(ours).toBeDefined();
      if (!ours) return;
      expect(ours.d).toBeCloseTo(ref.statistic, 12);
      // Asymptotic p with Stephens' correction: within 0.15/sqrt(n) absolute (the documented accuracy), and within
      // 15% relative in the small tail.
      expect(Math.abs(ours.p - ref.pValue)).toBeLessThanOrEqual(0.15 / Math.sqrt(n));
      if (ref.pValue < 0.05 && ref.pValue > 1e-300) {
        expect(Math.abs(ours.p / ref.pValue - 1)).toBeLessThanOrEqual(0.15);
      }
    });
  }

  it('Kolmogorov distribution values (from memory: Q_KS(1.36) ~ 0.049, Q_KS(1.63) ~ 0.010)', () => {
    // The classical large-sample critical values 1.36/sqrt(n) at 5% and 1.63/sqrt(n) at 1% (common practice).
    expect(Math.abs(kolmogorovSf(1.36) - 0.05)).toBeLessThanOrEqual(0.002);
    expect(Math.abs(kolmogorovSf(1.63) - 0.01)).toBeLessThanOrEqual(0.001);
    expect(kolmogorovSf(0)).toBe(1);
  });

  it('ignores NaN and needs two values', () => {
    expect(ksTest([NaN, 1], (v) => v)).toBeUndefined();
    const r = ksTest([0.25, NaN, 0.75], (v) => v);
    expect(r?.n).toBe(2);
    // Constructed: sample {0.25, 0.75} against U(0, 1): D = 0.25.
    expect(r?.d).toBeCloseTo(0.25, 15);
  });
});

describe('one-sample t-test against jStat', () => {
  it('two-sided p matches jStat studentt.cdf', () => {
    for (const [mean, std, n] of [[0.1, 1, 30], [-0.5, 2, 10], [0.02, 0.1, 1000], [3, 1, 5]] as const) {
      const r = oneSampleTTest(mean, std, n);
      expect(r).toBeDefined();
      const t = mean / (std / Math.sqrt(n));
      // Source: jStat 1.9.6 studentt.cdf.
      const p = 2 * (1 - jStat.studentt.cdf(Math.abs(t), n - 1));
      expect(r?.t).toBeCloseTo(t, 12);
      expect(Math.abs((r?.p ?? NaN) - p)).toBeLessThanOrEqual(1e-8);
    }
    expect(oneSampleTTest(1, 0, 10)).toBeUndefined();
    expect(oneSampleTTest(1, 1, 1)).toBeUndefined();
  });
});

import { describe, expect, it } from 'vitest';
import { chi2Cdf, chi2Interval, chi2MeanInterval, chi2Quantile } from '../../../extension/core/stats/chi2';
import { jStat } from './references';

// Source: NIST/SEMATECH e-Handbook 1.3.6.7.4 via reference-checks.md sec 1 (6-dp values [COMPUTED] by R, jStat,
// @stdlib; 3-dp NIST table columns). Rows: df, q(0.025), q(0.05), q(0.95), q(0.975), NIST 3-dp of the same four.
const TABLE: [number, number, number, number, number, [number, number, number, number]][] = [
  [1, 0.000982, 0.003932, 3.841459, 5.023886, [0.001, 0.004, 3.841, 5.024]],
  [2, 0.050636, 0.102587, 5.991465, 7.377759, [0.051, 0.103, 5.991, 7.378]],
  [3, 0.215795, 0.351846, 7.814728, 9.348404, [0.216, 0.352, 7.815, 9.348]],
  [6, 1.237344, 1.635383, 12.591587, 14.449375, [1.237, 1.635, 12.592, 14.449]],
  [9, 2.700389, 3.325113, 16.918978, 19.022768, [2.700, 3.325, 16.919, 19.023]],
  [15, 6.262138, 7.260944, 24.995790, 27.488393, [6.262, 7.261, 24.996, 27.488]],
  [100, 74.221927, 77.929465, 124.342113, 129.561197, [74.222, 77.929, 124.342, 129.561]],
];
const PROBS = [0.025, 0.05, 0.95, 0.975];

describe('chi-square quantiles (reference-checks.md sec 1)', () => {
  for (const [df, ...rest] of TABLE) {
    const six = rest.slice(0, 4) as number[];
    const nist = rest[4] as [number, number, number, number];
    it(`df ${df}: NIST 3-dp (+-5e-4), 6-dp values (1e-6 relative) and jStat chisquare.inv`, () => {
      PROBS.forEach((p, k) => {
        const q = chi2Quantile(p, df);
        // Source: NIST e-Handbook 1.3.6.7.4 table, tol 5e-4 absolute.
        expect(Math.abs(q - nist[k])).toBeLessThanOrEqual(5e-4 + 1e-12);
        // Source: reference-checks.md sec 1 6-dp values, tol 1e-6 relative (the table is rounded to 6 dp, so
        // the bound is 1e-6 relative or half a unit in the 6th decimal, whichever is larger).
        expect(Math.abs(q - six[k])).toBeLessThanOrEqual(Math.max(1e-6 * six[k], 5e-7));
        // Source: jStat 1.9.6 chisquare.inv (general-purpose reference library).
        expect(Math.abs(q - jStat.chisquare.inv(p, df))).toBeLessThanOrEqual(1e-6 * Math.max(1, q));
      });
    });
  }

  it('extra NIST values and round trips', () => {
    // Source: NIST e-Handbook 1.3.6.7.4 [READ]: df 4 upper 0.001 = 18.467; df 10 upper 0.95 = 18.307; df 100 lower 0.001 = 61.918.
    expect(Math.abs(chi2Quantile(0.999, 4) - 18.467)).toBeLessThanOrEqual(5e-4);
    expect(Math.abs(chi2Quantile(0.95, 10) - 18.307)).toBeLessThanOrEqual(5e-4);
    expect(Math.abs(chi2Quantile(0.001, 100) - 61.918)).toBeLessThanOrEqual(5e-4);
    // Source: reference-checks.md sec 1 round-trip [COMPUTED].
    expect(chi2Cdf(124.342113, 100)).toBeCloseTo(0.95, 7);
    expect(chi2Cdf(3.841459, 1)).toBeCloseTo(0.95, 7);
  });
});

describe("Bar-Shalom's acceptance intervals (reference-checks.md sec 2.2, tol 1e-4)", () => {
  // Source: Bar-Shalom, Li and Kirubarajan 2001 sec 5.4 definitions; values [COMPUTED] by R and jStat in sec 2.2.
  const cases: [string, number, number, [number, number]][] = [
    ['average NEES n_x 2, N 50', 2, 50, [1.4844, 2.5912]],
    ['average NEES n_x 4, N 50', 4, 50, [3.2546, 4.8212]],
    ['average NEES n_x 3, N 50', 3, 50, [2.3597, 3.7160]],
    ['average NEES n_x 6, N 50', 6, 50, [5.0782, 6.9975]],
    ['average NIS n_z 1, N 50', 1, 50, [0.6471, 1.4284]],
    ['time-average NIS n_z 1, K 100', 1, 100, [0.7422, 1.2956]],
    ['time-average NIS n_z 2, K 100', 2, 100, [1.6273, 2.4106]],
    ['single-step NEES n_x 2', 2, 1, [0.0506, 7.3778]],
  ];
  for (const [name, dof, count, [lo, hi]] of cases) {
    it(name, () => {
      const [a, b] = chi2MeanInterval(0.95, dof, count);
      expect(Math.abs(a - lo)).toBeLessThanOrEqual(1e-4);
      expect(Math.abs(b - hi)).toBeLessThanOrEqual(1e-4);
    });
  }
  it("the book's rounded worked region [1.5, 2.6] for N 50, n_x 2 (from memory, tol 0.05)", () => {
    const [a, b] = chi2MeanInterval(0.95, 2, 50);
    expect(Math.abs(a - 1.5)).toBeLessThanOrEqual(0.05);
    expect(Math.abs(b - 2.6)).toBeLessThanOrEqual(0.05);
  });
  it('single-update interval equals chi2Interval', () => {
    expect(chi2MeanInterval(0.95, 3, 1)).toEqual(chi2Interval(0.95, 3));
  });
});

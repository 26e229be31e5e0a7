import { describe, expect, it } from 'vitest';
import {
  autocorrelation, autocorrelationBound, boxPierce, ljungBox, normalizedAutocorrelation, twoSidedNormalQuantile, lagProductsByFft,
} from '../../../extension/core/stats/autocorrelation';
import { jStat } from './references';
import { makeRng } from '../consistency/rng';

describe('Ljung-Box (reference-checks.md sec 2.3)', () => {
  it('hand case x = 1..5, m = 2', () => {
    // Source: reference-checks.md sec 2.3 hand case [COMPUTED] by hand and R Box.test: r1 = 0.4, r2 = -0.1,
    // Q_LB = 91/60, Q_BP = 0.85, p = 0.4684; tol 1e-6.
    const r = autocorrelation([1, 2, 3, 4, 5], 5, 2);
    expect(r[0]).toBeCloseTo(0.4, 12);
    expect(r[1]).toBeCloseTo(-0.1, 12);
    const lb = ljungBox(r, 5, 2);
    expect(Math.abs(lb.q - 91 / 60)).toBeLessThanOrEqual(1e-6);
    expect(Math.abs(lb.p - 0.4684)).toBeLessThanOrEqual(1e-4);
    expect(Math.abs(boxPierce(r, 5, 2).q - 0.85)).toBeLessThanOrEqual(1e-6);
  });

  it('R data set lh, m = 10', () => {
    // Source: reference-checks.md sec 2.3, R 4.2.2 Box.test on `lh` [COMPUTED]: Q_LB 25.351 (p 0.004719),
    // Q_BP 23.095 (p 0.0104); tol 1e-3.
    const lh = [2.4, 2.4, 2.4, 2.2, 2.1, 1.5, 2.3, 2.3, 2.5, 2.0, 1.9, 1.7, 2.2, 1.8, 3.2, 3.2, 2.7, 2.2, 2.2, 1.9,
      1.9, 1.8, 2.7, 3.0, 2.3, 2.0, 2.0, 2.9, 2.9, 2.7, 2.7, 2.3, 2.6, 2.4, 1.8, 1.7, 1.5, 1.4, 2.1, 3.3, 3.5, 3.5,
      3.1, 2.6, 2.1, 3.4, 3.0, 2.9];
    expect(lh.length).toBe(48);
    const r = autocorrelation(lh, lh.length, 10);
    const lb = ljungBox(r, lh.length, 10);
    expect(Math.abs(lb.q - 25.351)).toBeLessThanOrEqual(1e-3);
    expect(Math.abs(lb.p - 0.004719)).toBeLessThanOrEqual(1e-3);
    const bp = boxPierce(r, lh.length, 10);
    expect(Math.abs(bp.q - 23.095)).toBeLessThanOrEqual(1e-3);
    expect(Math.abs(bp.p - 0.0104)).toBeLessThanOrEqual(1e-3);
  });

  it('NBS 9-point frequency series, m = 3', () => {
    // Source: reference-checks.md sec 2.3 with the series of sec 3.3 (Riley, NIST SP 1065), R [COMPUTED]:
    // r1..3 = 0.041839, -0.487907, -0.033802, Q_LB = 3.4073 (p 0.333); tol 1e-4.
    const y = [892, 809, 823, 798, 671, 644, 883, 903, 677];
    const r = autocorrelation(y, y.length, 3);
    expect(Math.abs(r[0] - 0.041839)).toBeLessThanOrEqual(1e-4);
    expect(Math.abs(r[1] + 0.487907)).toBeLessThanOrEqual(1e-4);
    expect(Math.abs(r[2] + 0.033802)).toBeLessThanOrEqual(1e-4);
    const lb = ljungBox(r, y.length, 3);
    expect(Math.abs(lb.q - 3.4073)).toBeLessThanOrEqual(1e-4);
    expect(Math.abs(lb.p - 0.333)).toBeLessThanOrEqual(1e-3);
  });

  it('quiz-style worked value n = 300, r = (0.25, -0.10, -0.05)', () => {
    // Source: reference-checks.md sec 2.3 [READ] leetquiz worked answer Q(3) = 22.74 (low authority); tol 0.01.
    expect(Math.abs(ljungBox([0.25, -0.1, -0.05], 300, 3).q - 22.74)).toBeLessThanOrEqual(0.01);
  });

  it('fitted parameters reduce the degrees of freedom', () => {
    const lb = ljungBox([0.25, -0.1, -0.05], 300, 3, 1);
    expect(lb.dof).toBe(2);
  });

  it('a constant series has no autocorrelation (NaN), not a division by zero', () => {
    const r = autocorrelation([2, 2, 2, 2], 4, 2);
    expect(r[0]).toBeNaN();
  });
});

describe('normalized autocorrelation and its bound (reference-checks.md sec 2.1-2.2)', () => {
  it('bounds +-1.96/sqrt(K): 0.19600 for K 100, 0.27718 for K 50', () => {
    // Source: reference-checks.md sec 2.2 [COMPUTED], tol 1e-4; z_0.975 = 1.959964 (sec 2.2, @stdlib and jStat).
    expect(Math.abs(autocorrelationBound(0.95, 100) - 0.196)).toBeLessThanOrEqual(1e-4);
    expect(Math.abs(autocorrelationBound(0.95, 50) - 0.27718)).toBeLessThanOrEqual(1e-4);
    expect(Math.abs(twoSidedNormalQuantile(0.95) - 1.959964)).toBeLessThanOrEqual(1e-6);
    // Source: jStat normal.inv.
    expect(twoSidedNormalQuantile(0.9)).toBeCloseTo(jStat.normal.inv(0.95, 0, 1), 8);
  });

  it('matches the definition on a hand case (constructed)', () => {
    // Scalar sequence [1, -1, 1, -1]: lag 1 products sum -3 over 3 pairs, energies 3 and 3: rho(1) = -1.
    const rho = normalizedAutocorrelation([1, -1, 1, -1], 1, 4, 2);
    expect(rho[0]).toBeCloseTo(-1, 15);
    expect(rho[1]).toBeCloseTo(1, 15);
    // 2-vector sequence [(1,0), (0,1), (1,1)]: lag 1: (1,0).(0,1) + (0,1).(1,1) = 1; energies 1+1 and 1+2.
    const rho2 = normalizedAutocorrelation([1, 0, 0, 1, 1, 1], 2, 3, 1);
    expect(rho2[0]).toBeCloseTo(1 / Math.sqrt(2 * 3), 15);
  });

  it('white noise stays inside the 95% bound at about 95% of lags (seeded)', () => {
    const rng = makeRng(99);
    const K = 4000;
    const lags = 200;
    const nu = new Float64Array(K * 2);
    for (let i = 0; i < nu.length; i++) nu[i] = rng.normal();
    const rho = normalizedAutocorrelation(nu, 2, K, lags);
    let inside = 0;
    for (let j = 1; j <= lags; j++) if (Math.abs(rho[j - 1]) <= autocorrelationBound(0.95, K - j)) inside++;
    // Binomial(200, 0.95): mean 190, sd 3.1; 180 is more than 3 sd below.
    expect(inside).toBeGreaterThanOrEqual(180);
  });
});

describe('lagProductsByFft (the lag products of a whole series at once)', () => {
  // Reference: the plain definition s_k = sum_{a < len - k} x[a] x[a + k] over pairs of present values (common
  // practice), summed here term by term. Seeded series (invented test inputs).
  const plain = (x: Float64Array, len: number, k: number): number => {
    let s = 0;
    for (let a = 0; a + k < len; a++) if (x[a] === x[a] && x[a + k] === x[a + k]) s += x[a] * x[a + k];
    return s;
  };
  it('equals the direct sums to 1e-12 of the lag-0 sum, with missing values, for lengths around powers of two', () => {
    let seed = 7;
    const next = (): number => { seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0; return seed / 2 ** 32 - 0.5; };
    for (const len of [1, 2, 5, 64, 65, 1000, 4097]) {
      const x = new Float64Array(len + 3).fill(9); // values past len must be ignored
      let e = 0;
      for (let a = 0; a < len; a++) { e = 0.95 * e + next(); x[a] = a % 13 === 5 ? NaN : e; }
      const maxLag = Math.min(len - 1, 300);
      const got = lagProductsByFft(x, len, maxLag);
      expect(got.length).toBe(maxLag + 1);
      const s0 = plain(x, len, 0);
      for (let k = 0; k <= maxLag; k++) expect(Math.abs(got[k] - plain(x, len, k)), `len ${len} lag ${k}`).toBeLessThanOrEqual(1e-12 * s0);
    }
  });
});

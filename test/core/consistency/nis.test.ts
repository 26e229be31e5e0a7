import { describe, expect, it } from 'vitest';
import { inv } from 'mathjs';
import {
  computeNis, computeNisDetailed, nisTailProbability, wrapAngle_rad,
  NIS_BAD_COVARIANCE, NIS_FROM_INNOVATION, NIS_FROM_LOG, NIS_MISSING,
} from '../../../extension/core/consistency/nis';
import { makeChannel } from './makeLog';
import { makeRng, randomSpd } from './rng';

describe('wrapAngle_rad', () => {
  it('wraps to (-pi, pi] (common practice)', () => {
    expect(wrapAngle_rad(0.5)).toBe(0.5);
    expect(wrapAngle_rad(Math.PI)).toBe(Math.PI);
    expect(wrapAngle_rad(-Math.PI)).toBeCloseTo(Math.PI, 14);
    expect(wrapAngle_rad(3 * Math.PI / 2)).toBeCloseTo(-Math.PI / 2, 14);
    expect(wrapAngle_rad(-7 * Math.PI / 2)).toBeCloseTo(Math.PI / 2, 13);
    expect(wrapAngle_rad(2 * Math.PI + 0.1)).toBeCloseTo(0.1, 14);
    expect(wrapAngle_rad(NaN)).toBeNaN();
  });
});

describe('computeNis', () => {
  it('1 dof: nu^2 / S; logged fallback; NaN when nothing is computable (constructed)', () => {
    const ch = makeChannel({
      t_s: [0, 1, 2, 3, 4],
      nu: [2, NaN, 3, NaN, 1],
      S: [4, 1, 0, 1, 0.25],
      nisLogged: [99, 7, 5, NaN, NaN],
    });
    const { nis, source } = computeNisDetailed(ch);
    expect(nis[0]).toBe(1);          // from nu and S, logged ignored
    expect(nis[1]).toBe(7);          // nu missing: logged
    expect(nis[2]).toBe(5);          // S = 0 is not positive definite: logged, flagged
    expect(nis[3]).toBeNaN();
    expect(nis[4]).toBe(4);
    expect(Array.from(source)).toEqual([
      NIS_FROM_INNOVATION, NIS_FROM_LOG, NIS_BAD_COVARIANCE, NIS_MISSING, NIS_FROM_INNOVATION,
    ]);
  });

  it('wraps angle components before the NIS', () => {
    const ch = makeChannel({ t_s: [0], dof: 2, nu: [2 * Math.PI - 0.1, 0.2], S: [0.01, 0, 0, 0.04], angleComponents: [true, false] });
    expect(computeNis(ch)[0]).toBeCloseTo(0.01 / 0.01 + 0.04 / 0.04, 10);
  });

  it('3 dof agrees with mathjs inv on seeded random S', () => {
    const rng = makeRng(42);
    const n = 3;
    const len = 50;
    const S = new Float64Array(len * n * n);
    const nu = new Float64Array(len * n);
    for (let i = 0; i < len; i++) {
      S.set(randomSpd(rng, n), i * n * n);
      for (let c = 0; c < n; c++) nu[i * n + c] = rng.normal();
    }
    const nis = computeNis(makeChannel({ t_s: Float64Array.from({ length: len }, (_, i) => i), dof: n, nu, S }));
    for (let i = 0; i < len; i++) {
      const rows = [0, 1, 2].map((r) => Array.from(S.subarray(i * 9 + r * 3, i * 9 + r * 3 + 3)));
      const m = inv(rows) as number[][]; // Source: mathjs inv.
      let q = 0;
      for (let r = 0; r < 3; r++) for (let c = 0; c < 3; c++) q += nu[i * 3 + r] * m[r][c] * nu[i * 3 + c];
      expect(nis[i]).toBeCloseTo(q, 8);
    }
  });

  it('without S uses the logged NIS', () => {
    const ch = makeChannel({ t_s: [0, 1], nu: [NaN, NaN], nisLogged: [1.5, -1] });
    const nis = computeNis(ch);
    expect(nis[0]).toBe(1.5);
    expect(nis[1]).toBeNaN(); // a negative NIS is not a NIS
  });
});

describe('nisTailProbability', () => {
  it('matches the chi-square upper tail at table points', () => {
    // Source: NIST/SEMATECH e-Handbook 1.3.6.7.4 via reference-checks.md sec 1 (q(0.95) for 1 dof = 3.841459).
    expect(nisTailProbability(3.841459, 1)).toBeCloseTo(0.05, 6);
    // Source: same table, df 3, q(0.975) = 9.348404.
    expect(nisTailProbability(9.348404, 3)).toBeCloseTo(0.025, 6);
    // Source: NIST extra value, df 4 upper 0.001 = 18.467.
    expect(nisTailProbability(18.467, 4)).toBeCloseTo(0.001, 5);
    expect(nisTailProbability(NaN, 1)).toBeNaN();
    expect(nisTailProbability(0, 2)).toBe(1);
    // A far tail stays positive and tiny instead of rounding to 0 (constructed: NIS 144.2, 1 dof ~ 3e-33).
    const p = nisTailProbability(144.2, 1);
    expect(p).toBeGreaterThan(0);
    expect(p).toBeLessThan(1e-30);
  });
});

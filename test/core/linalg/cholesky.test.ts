import { describe, expect, it } from 'vitest';
import { inv, lusolve, det } from 'mathjs';
import {
  asymmetry, cholesky, choleskyFactor, choleskyLogDet, choleskySolve, inverseQuadraticForm,
} from '../../../extension/core/linalg/cholesky';
import { makeRng, randomSpd } from '../consistency/rng';

function toRows(a: Float64Array, n: number): number[][] {
  const rows: number[][] = [];
  for (let r = 0; r < n; r++) rows.push(Array.from(a.subarray(r * n, r * n + n)));
  return rows;
}

describe('Cholesky on seeded random SPD matrices', () => {
  const rng = makeRng(20261202);
  for (const n of [1, 2, 3, 4, 6, 9, 15]) {
    it(`n = ${n}: L L^T = A, solve and inverse agree with mathjs lusolve/inv, log-det with mathjs det`, () => {
      for (let trial = 0; trial < 10; trial++) {
        const a = randomSpd(rng, n);
        const l = cholesky(a, n);
        expect(l).toBeDefined();
        if (!l) return;
        // Reconstruction L L^T = A (exact algebra, round-off tolerance).
        for (let r = 0; r < n; r++) {
          for (let c = 0; c < n; c++) {
            let s = 0;
            for (let k = 0; k < n; k++) s += l[r * n + k] * l[c * n + k];
            expect(s).toBeCloseTo(a[r * n + c], 9);
          }
          for (let c = r + 1; c < n; c++) expect(l[r * n + c]).toBe(0);
        }
        const b = new Float64Array(n);
        for (let i = 0; i < n; i++) b[i] = rng.normal();
        const x = new Float64Array(n);
        choleskySolve(l, 0, n, b, 0, x, 0);
        // Source: mathjs 15 lusolve (general-purpose reference library).
        const ref = lusolve(toRows(a, n), Array.from(b)) as number[][];
        for (let i = 0; i < n; i++) expect(x[i]).toBeCloseTo(ref[i][0], 8);
        // Source: mathjs inv: v^T A^-1 v.
        const ainv = inv(toRows(a, n)) as number[][];
        let q = 0;
        for (let r = 0; r < n; r++) for (let c = 0; c < n; c++) q += b[r] * ainv[r][c] * b[c];
        const work = new Float64Array(n * n + n);
        const ours = inverseQuadraticForm(a, 0, n, b, 0, work);
        expect(Math.abs(ours - q)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(q)));
        // Source: mathjs det.
        const d = det(toRows(a, n)) as number;
        expect(choleskyLogDet(l, 0, n)).toBeCloseTo(Math.log(d), 8);
      }
    });
  }

  it('works at an offset inside a larger buffer and in place', () => {
    const n = 3;
    const a = randomSpd(makeRng(7), n);
    const buf = new Float64Array(5 + n * n);
    buf.set(a, 5);
    expect(choleskyFactor(buf, 5, n, buf, 5)).toBe(true);
    const l = cholesky(a, n);
    expect(Array.from(buf.subarray(5))).toEqual(Array.from(l ?? []));
  });
});

describe('Cholesky reports failure instead of throwing', () => {
  it('rejects indefinite, singular, negative and non-finite matrices', () => {
    // Constructed: eigenvalues 3 and -1.
    expect(cholesky([1, 2, 2, 1], 2)).toBeUndefined();
    // Constructed: rank one [1 1; 1 1].
    expect(cholesky([1, 1, 1, 1], 2)).toBeUndefined();
    expect(cholesky([-1], 1)).toBeUndefined();
    expect(cholesky([0], 1)).toBeUndefined();
    expect(cholesky([1, NaN, NaN, 1], 2)).toBeUndefined();
    expect(cholesky([Infinity, 0, 0, 1], 2)).toBeUndefined();
    const work = new Float64Array(6);
    expect(inverseQuadraticForm(new Float64Array([1, 2, 2, 1]), 0, 2, new Float64Array([1, 1]), 0, work)).toBeNaN();
    expect(inverseQuadraticForm(new Float64Array([0]), 0, 1, new Float64Array([1]), 0, work)).toBeNaN();
  });

  it('accepts a hand case with the known factor', () => {
    // Constructed: A = [4 2; 2 3] = L L^T with L = [2 0; 1 sqrt(2)].
    const l = cholesky([4, 2, 2, 3], 2);
    expect(l).toBeDefined();
    expect(l?.[0]).toBe(2);
    expect(l?.[2]).toBe(1);
    expect(l?.[3]).toBeCloseTo(Math.SQRT2, 15);
    expect(choleskyLogDet(l ?? new Float64Array(4), 0, 2)).toBeCloseTo(Math.log(8), 14);
  });

  it('measures asymmetry', () => {
    expect(asymmetry(new Float64Array([2, 1, 1, 2]), 0, 2)).toBe(0);
    expect(asymmetry(new Float64Array([2, 1, 0.5, 2]), 0, 2)).toBeCloseTo(0.25, 15);
    expect(asymmetry(new Float64Array([2, NaN, 1, 2]), 0, 2)).toBeNaN();
  });
});

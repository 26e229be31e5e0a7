/**
 * The cumulants of a window's NEES sum (extension/core/errors/nees.ts windowCumulants, traceCube): tr(C^2) and tr(C^3)
 * of the K x K Toeplitz correlation matrix, computed in O(L) and O(L^2), against the definitions evaluated on the
 * explicit matrix with mathjs (npm: matrix product and trace), and, for windows too large for that, against the
 * band-limited triple sum written out plainly here (the definition of the trace of a product, common practice).
 * The autocorrelations are seeded decaying sequences (invented test inputs; any values in [-1, 1] would do).
 */
import { describe, expect, it } from 'vitest';
import * as math from 'mathjs';
import { traceCube, windowCumulants } from '../../../extension/core/errors/nees';

/** A seeded decaying autocorrelation of L lags: r(k) = rho^k with a little seeded noise, in (-1, 1). */
function decaying(L: number, rho: number, seed: number): Float64Array {
  let s = seed >>> 0;
  const next = (): number => { s = (Math.imul(s, 1664525) + 1013904223) >>> 0; return s / 2 ** 32; };
  const r = new Float64Array(L);
  for (let k = 1; k <= L; k++) r[k - 1] = Math.pow(rho, k) * (0.9 + 0.2 * next());
  return r;
}

/** The K x K correlation matrix: 1 on the diagonal, r(|i - j|) within L lags, 0 beyond. */
function toeplitz(K: number, r: Float64Array, L: number): number[][] {
  return Array.from({ length: K }, (_, i) => Array.from({ length: K }, (_, j) => {
    const d = Math.abs(i - j);
    return d === 0 ? 1 : d <= L ? r[d - 1] : 0;
  }));
}

/** tr(C^3) as the band-limited triple sum over (i, j, l). */
function tripleSum(K: number, r: Float64Array, L: number): number {
  const c = (m: number): number => { const a = Math.abs(m); return a === 0 ? 1 : a <= L ? r[a - 1] : 0; };
  let t = 0;
  for (let i = 0; i < K; i++) {
    for (let j = Math.max(0, i - L); j <= Math.min(K - 1, i + L); j++) {
      const cij = c(i - j);
      for (let l = Math.max(0, j - L); l <= Math.min(K - 1, j + L); l++) t += cij * c(j - l) * c(l - i);
    }
  }
  return t;
}

const rel = (a: number, b: number): number => Math.abs(a - b) / Math.max(Math.abs(b), 1e-300);

describe('traceCube', () => {
  it('equals tr(C^3) of the explicit matrix (mathjs) for small windows, every lag count up to K - 1', () => {
    for (const K of [1, 2, 3, 7, 30, 64]) {
      for (const Lwant of [0, 1, 3, 10, 63]) {
        const L = Math.min(Lwant, K - 1);
        for (const rho of [0.95, 0.5, -0.6]) {
          const r = decaying(Math.max(L, 1), rho, K * 100 + L);
          const C = math.matrix(toeplitz(K, r, L));
          const expected = math.trace(math.multiply(math.multiply(C, C), C)) as number;
          expect(rel(traceCube(K, r, L), expected), `K ${K} L ${L} rho ${rho}`).toBeLessThan(1e-12);
        }
      }
    }
  });

  it('is K for white errors (no lags)', () => {
    expect(traceCube(500, new Float64Array(0), 0)).toBe(500);
  });

  it('equals the triple sum where the window is long (K (2L + 1)^2 far above 4e6, once approximated)', () => {
    for (const [K, L] of [[2000, 60], [3000, 40], [150, 149]]) {
      const r = decaying(L, 0.97, K + L);
      // the triple sum adds up to 3e7 terms one by one: its own rounding reaches a few 1e-12 of the total
      expect(rel(traceCube(K, r, L), tripleSum(K, r, L)), `K ${K} L ${L}`).toBeLessThan(1e-10);
    }
  });
});

describe('windowCumulants', () => {
  it('kappa1 = n K, kappa2 = 2 sum tr(C_i^2), kappa3 = 8 sum tr(C_i^3) over the components (mathjs on the matrices)', () => {
    const K = 40;
    const rs = [decaying(12, 0.9, 1), decaying(5, 0.4, 2), decaying(39, 0.97, 3)];
    let tr2 = 0, tr3 = 0;
    for (const r of rs) {
      const C = math.matrix(toeplitz(K, r, Math.min(r.length, K - 1)));
      const C2 = math.multiply(C, C);
      tr2 += math.trace(C2) as number;
      tr3 += math.trace(math.multiply(C2, C)) as number;
    }
    const c = windowCumulants(K, rs);
    expect(c.kappa1).toBe(3 * K);
    expect(rel(c.kappa2, 2 * tr2)).toBeLessThan(1e-12);
    expect(rel(c.kappa3, 8 * tr3)).toBeLessThan(1e-12);
  });

  it('gives the chi-square cumulants for white components: 2 n K and 8 n K', () => {
    const c = windowCumulants(100, [new Float64Array(0), new Float64Array(0), new Float64Array(0)]);
    expect(c).toEqual({ kappa1: 300, kappa2: 600, kappa3: 2400 });
  });
});

/** Test helpers for geometry: seeded PRNG and tolerant comparisons (gl-matrix's absolute-then-relative rule). */
import { mulberry32 } from '../../helpers/mulberry32';
import { expect } from 'vitest';

/** Seeded PRNG (mulberry32) so every failure can be replayed. */
export function seededRandom(seed: number): () => number {
  return mulberry32(seed);
}

/** Standard normal draws from a uniform source (Box-Muller). */
export function gaussian(rand: () => number): () => number {
  return () => {
    const u = Math.max(rand(), 1e-300);
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rand());
  };
}

/** |a - b| <= tol * max(1, |a|, |b|) elementwise. */
export function expectClose(a: ArrayLike<number>, b: ArrayLike<number>, tol: number): void {
  expect(a.length).toBe(b.length);
  for (let i = 0; i < a.length; i++) {
    const d = Math.abs(a[i] - b[i]);
    if (!(d <= tol * Math.max(1, Math.abs(a[i]), Math.abs(b[i])))) {
      throw new Error(`element ${i}: ${a[i]} vs ${b[i]} (diff ${d}, tol ${tol})\n a=${Array.from(a)}\n b=${Array.from(b)}`);
    }
  }
}

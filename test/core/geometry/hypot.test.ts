/**
 * hypot3 / hypot4 must give the very bits of the platform's Math.hypot (the reference here: the report's numbers were
 * computed with it), on seeded random values of every kind: near-unit quaternions, wide magnitudes, zeros of both
 * signs, NaN and infinities.
 */
import { describe, expect, it } from 'vitest';
import { hypot3, hypot4 } from '../../../extension/core/geometry/hypot';
import { seededRandom } from './helpers';

/** A draw that is sometimes special (0, -0, NaN, +-Infinity), else of a random magnitude between 1e-200 and 1e300. */
function mixedDraw(rand: () => number): () => number {
  return () => {
    const k = rand();
    if (k < 0.04) return 0;
    if (k < 0.06) return -0;
    if (k < 0.08) return NaN;
    if (k < 0.1) return Infinity;
    if (k < 0.12) return -Infinity;
    if (k < 0.5) return rand() * 2 - 1;
    return (rand() - 0.5) * Math.pow(10, Math.floor(rand() * 500 - 200));
  };
}

describe('hypot3 and hypot4', () => {
  it('equal Math.hypot bit for bit on mixed values', () => {
    const draw = mixedDraw(seededRandom(7));
    let mismatches = 0;
    for (let i = 0; i < 300_000; i++) {
      const a = draw(), b = draw(), c = draw(), d = draw();
      if (!Object.is(hypot4(a, b, c, d), Math.hypot(a, b, c, d))) mismatches++;
      if (!Object.is(hypot3(a, b, c), Math.hypot(a, b, c))) mismatches++;
    }
    expect(mismatches).toBe(0);
  });

  it('equal Math.hypot bit for bit on near-unit quaternions and small rotation-vector parts', () => {
    const rand = seededRandom(11);
    let mismatches = 0;
    for (let i = 0; i < 300_000; i++) {
      const w = rand() * 2 - 1, x = rand() * 2 - 1, y = rand() * 2 - 1, z = rand() * 2 - 1;
      const n = Math.hypot(w, x, y, z) * (1 + (rand() - 0.5) * 1e-3);
      if (!Object.is(hypot4(w / n, x / n, y / n, z / n), Math.hypot(w / n, x / n, y / n, z / n))) mismatches++;
      const e = 1e-6 * rand();
      if (!Object.is(hypot3(x * e, y * e, z * e), Math.hypot(x * e, y * e, z * e))) mismatches++;
    }
    expect(mismatches).toBe(0);
  });

  it('keep the special cases of Math.hypot: infinity beats NaN, all zeros give +0', () => {
    expect(hypot4(NaN, Infinity, 0, 1)).toBe(Infinity);
    expect(hypot3(-Infinity, NaN, 1)).toBe(Infinity);
    expect(hypot4(NaN, 1, 2, 3)).toBeNaN();
    expect(Object.is(hypot4(-0, -0, 0, -0), 0)).toBe(true);
    expect(hypot3(3, 4, 12)).toBe(13);
  });
});

// Checks of the min/max envelope (extension/core/envelope.ts) against a brute-force scan of the same data.
// The rule itself (one min and one max per pixel column, so spikes survive) is common practice, as in uPlot's
// src/paths/linear.js decimation; the expected values below are computed by hand or by the plain scan.
import { mulberry32 } from '../helpers/mulberry32';
import { describe, expect, it } from 'vitest';
import { envelope, isAscending, lowerBound, stride, upperBound } from '../../extension/core/envelope';

/** Seeded PRNG (mulberry32) so every failure can be replayed. */
function prng(seed: number): () => number {
  return mulberry32(seed);
}

describe('binary search', () => {
  const x = new Float64Array([0, 1, 1, 2, 5]);
  it('finds bounds like a linear scan', () => {
    expect([lowerBound(x, 1), upperBound(x, 1), lowerBound(x, -1), upperBound(x, 9), lowerBound(x, 3)]).toEqual([1, 3, 0, 5, 4]);
  });
  it('tells ascending columns', () => {
    expect([isAscending(x), isAscending(new Float64Array([0, 2, 1])), isAscending(new Float64Array([0, NaN]))]).toEqual([true, false, false]);
  });
});

describe('envelope', () => {
  it('keeps a single spike that a stride would drop (hand-checked)', () => {
    const n = 1000;
    const x = new Float64Array(n).map((_, i) => i * 0.01);
    const y = new Float64Array(n);
    y[537] = 144.2;
    const env = envelope({ x, y }, 0, 9.99, 10);
    expect(env.decimated).toBe(true);
    expect(env.inWindow).toBe(1000);
    expect(Math.max(...env.y)).toBe(144.2);
    expect(env.x[Array.from(env.y).indexOf(144.2)]).toBeCloseTo(5.37, 12);
    expect(env.x.length).toBeLessThanOrEqual(2 * 10 + 2);
  });

  it('returns the points as they are when the window is small', () => {
    const x = new Float64Array([0, 1, 2, 3, 4, 5]);
    const y = new Float64Array([10, 11, 12, 13, 14, 15]);
    const line = new Float64Array([2, 3, 4, 5, 6, 7]);
    const env = envelope({ x, y, line }, 1.5, 3.5, 100);
    expect({ x: Array.from(env.x), y: Array.from(env.y), line: Array.from(env.line ?? []), inWindow: env.inWindow, decimated: env.decimated }).toEqual({
      x: [1, 2, 3, 4],
      y: [11, 12, 13, 14],
      line: [3, 4, 5, 6],
      inWindow: 2,
      decimated: false,
    });
  });

  it('matches a brute-force min/max per bucket on random data with gaps and a band', () => {
    const rnd = prng(7);
    const n = 20000;
    const x = new Float64Array(n);
    const y = new Float64Array(n);
    const lo = new Float64Array(n);
    const hi = new Float64Array(n);
    let t = 0;
    for (let i = 0; i < n; i++) {
      t += rnd() * 0.02;
      x[i] = t;
      y[i] = rnd() < 0.01 ? NaN : (rnd() - 0.5) * (rnd() < 0.001 ? 1000 : 1);
      lo[i] = -1 - rnd();
      hi[i] = 1 + rnd();
    }
    const t0 = x[3000];
    const t1 = x[17000];
    const buckets = 300;
    const env = envelope({ x, y, lo, hi }, t0, t1, buckets);
    expect(env.decimated).toBe(true);
    expect(env.x.length).toBeLessThanOrEqual(2 * buckets + 2);
    expect(isAscending(env.x)).toBe(true);
    // Each bucket's extremes appear in the output at their own x.
    const span = (t1 - t0) / buckets;
    for (let b = 0; b < buckets; b++) {
      const a = t0 + b * span;
      const e = b === buckets - 1 ? Infinity : a + span;
      let mn = Infinity;
      let mx = -Infinity;
      let bandLo = Infinity;
      let bandHi = -Infinity;
      for (let i = 0; i < n; i++) {
        if (x[i] < a || x[i] >= e || x[i] > t1) continue;
        if (y[i] < mn) mn = y[i];
        if (y[i] > mx) mx = y[i];
        bandLo = Math.min(bandLo, lo[i]);
        bandHi = Math.max(bandHi, hi[i]);
      }
      if (mn === Infinity) continue;
      const inBucket = Array.from(env.x).map((v, k) => [v, k]).filter(([v]) => v >= a && v < e && v <= t1).map(([, k]) => k);
      const ys = inBucket.map((k) => env.y[k]).filter((v) => !Number.isNaN(v));
      expect([Math.min(...ys), Math.max(...ys)]).toEqual([mn, mx]);
      expect(env.lo?.[inBucket[0]]).toBe(bandLo);
      expect(env.hi?.[inBucket[0]]).toBe(bandHi);
    }
    // Neighbours just outside the window are kept.
    expect([env.x[0], env.x[env.x.length - 1]]).toEqual([x[2999], x[17001]]);
  });

  it('keeps an all-NaN bucket as one gap point', () => {
    const n = 400;
    const x = new Float64Array(n).map((_, i) => i);
    const y = new Float64Array(n).map((_, i) => (i >= 100 && i < 200 ? NaN : 1));
    const env = envelope({ x, y }, 0, 399, 4);
    const gaps = Array.from(env.y).filter((v) => Number.isNaN(v)).length;
    expect(gaps).toBe(1);
  });
});

describe('stride', () => {
  it('thins an xy path and keeps its last point', () => {
    const x = new Float64Array([0, 1, 2, 3, 4, 5, 6]);
    const y = new Float64Array([6, 5, 4, 3, 2, 1, 0]);
    const s = stride({ x, y }, 3);
    expect({ x: Array.from(s.x), y: Array.from(s.y) }).toEqual({ x: [0, 3, 6], y: [6, 3, 0] });
    const s2 = stride({ x, y }, 2);
    expect(Array.from(s2.x)).toEqual([0, 4, 6]);
    expect(stride({ x, y }, 100).decimated).toBe(false);
  });
});

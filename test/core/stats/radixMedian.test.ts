import { describe, expect, it } from 'vitest';
import { radixMedian } from '../../../extension/core/stats/radixMedian';

/** Median by the definition: sort, then the middle value or the mean of the two middle ones. */
function sortedMedian(v: Float64Array): number {
  const s = Float64Array.from(v).sort();
  const n = s.length;
  return n % 2 ? s[(n - 1) / 2] : (s[n / 2 - 1] + s[n / 2]) / 2;
}

/** Small deterministic generator (Park-Miller minimal standard), for repeatable cases. */
function lcg(seed: number): () => number {
  let s = seed;
  return () => (s = (s * 16807) % 2147483647) / 2147483647;
}

describe('radixMedian (histogram of top bits, then selection in one bucket)', () => {
  // Source: definition of the sample median (middle order statistic, or mean of the two middle ones); common practice
  it('equals the median of the sorted values, odd and even lengths, short and long columns', () => {
    const rnd = lcg(7);
    for (const n of [1, 2, 3, 10, 4095, 4096, 4097, 20000, 125001]) {
      const v = new Float64Array(n);
      for (let i = 0; i < n; i++) v[i] = (rnd() - 0.5) * 1e-6 * (1 + 1000 * rnd());
      const copy = Float64Array.from(v);
      expect(radixMedian(v)).toBe(sortedMedian(v));
      expect(v).toEqual(copy); // input left as it was
    }
  });

  it('equals the sorted median on short blocks of close values (one slowly moving estimate), either sign', () => {
    const rnd = lcg(5);
    for (const [n, base, spread] of [[64, 0.0075, 1e-6], [1250, 0.0075, 1e-6], [1251, -0.31, 1e-5], [2000, 0, 1e-3], [999, -2e-6, 1e-6]]) {
      const v = new Float64Array(n);
      for (let i = 0; i < n; i++) v[i] = base + Math.round((rnd() - 0.5) * 100) * spread;
      expect(radixMedian(v)).toBe(sortedMedian(v));
    }
  });

  it('handles ties, one repeated value and a prefix length', () => {
    const rnd = lcg(11);
    const v = new Float64Array(50000);
    for (let i = 0; i < v.length; i++) v[i] = Math.round(rnd() * 6) * 1e-6 - 3e-6; // seven distinct values
    expect(radixMedian(v)).toBe(sortedMedian(v));
    expect(radixMedian(new Float64Array(9000).fill(2.5))).toBe(2.5);
    expect(radixMedian(v, 10001)).toBe(sortedMedian(v.subarray(0, 10001)));
    expect(radixMedian(new Float64Array(0))).toBeNaN();
  });

  it('takes the lower middle from a lower bucket when the upper middle is first in its bucket', () => {
    // half the values at -1, half at +1: the two middle values lie in different buckets
    const v = new Float64Array(8000);
    for (let i = 0; i < v.length; i++) v[i] = i % 2 ? 1 : -1;
    expect(radixMedian(v)).toBe(0);
    const w = new Float64Array(8000);
    for (let i = 0; i < w.length; i++) w[i] = i < 4000 ? -5 - i : 1e3 + i;
    expect(radixMedian(w)).toBe(sortedMedian(w));
  });
});

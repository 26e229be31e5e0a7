import { describe, expect, it } from 'vitest';
import { median } from '../../../extension/core/uwb/residuals';
import { makeSeededRandom } from '../../../extension/core/stats/seededRandom';

describe('median (quickselect)', () => {
  it('equals the middle of a full sort on random, tied and sorted inputs', () => {
    const rng = makeSeededRandom(3);
    for (let trial = 0; trial < 200; trial++) {
      const n = 1 + Math.floor(rng.uniform() * 60);
      const v = Array.from({ length: n }, () => (trial % 3 === 0 ? Math.floor(rng.uniform() * 4) : trial % 3 === 1 ? rng.normal() : 0));
      if (trial % 7 === 0) v.sort((a, b) => a - b);
      const s = [...v].sort((a, b) => a - b);
      const expected = n % 2 ? s[(n - 1) / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]);
      expect(median(v)).toBe(expected);
    }
    expect(Number.isNaN(median([]))).toBe(true);
  });
});

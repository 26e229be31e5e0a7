import { describe, expect, it } from 'vitest';
import { cusumArlTwoSided, cusumThresholdForArl, detectChanges, tabularCusum } from '../../../extension/core/imu/cusum';
import { normalRng } from './rng';

describe('tabular CUSUM, Montgomery & Runger worked example', () => {
  // Source: Montgomery & Runger, Applied Statistics and Probability for Engineers, 3rd ed., sec. 16-10, Example 16-6,
  // Tables 16-7 and 16-8, p. 634-636, via reference-checks.md sec. 7.1 [READ + COMPUTED]; tol 1e-9.
  // n_H at observation 20 is 1 (the scanned table's 0 is a print slip per reference-checks.md).
  const x = [102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4, 97.0, 96.7, 100.3, 101.4, 97.2, 101.0];
  const sH = [2.0, 0, 0, 0, 2.0, 0.5, 0, 0, 0, 0, 1.3, 0, 1.1, 0, 0, 0, 0.3, 1.7, 0, 1.0];
  const sL = [0, 3.2, 2.9, 2.5, 0, 0, 0, 0.3, 0, 0, 0, 0, 0, 0, 1.0, 2.3, 0, 0, 0.8, 0];
  const nH = [1, 0, 0, 0, 1, 2, 0, 0, 0, 0, 1, 0, 1, 0, 0, 0, 1, 2, 0, 1];
  const nL = [0, 1, 2, 3, 0, 0, 0, 1, 0, 0, 0, 0, 0, 0, 1, 2, 0, 0, 1, 0];
  const r = tabularCusum(x, 99, 1, 10);
  it('s_H and s_L', () => {
    for (let i = 0; i < x.length; i++) {
      expect(Math.abs(r.sH[i] - sH[i])).toBeLessThan(1e-9);
      expect(Math.abs(r.sL[i] - sL[i])).toBeLessThan(1e-9);
    }
  });
  it('run counters n_H and n_L', () => {
    expect(Array.from(r.nH)).toEqual(nH);
    expect(Array.from(r.nL)).toEqual(nL);
  });
  it('no alarm at H = 10', () => {
    expect(r.alarms).toEqual([]);
  });
  it('alarms when H is below the largest sum (3.2 at observation 2)', () => {
    expect(tabularCusum(x, 99, 1, 3).alarms).toEqual([1]);
  });
});

describe('average run length', () => {
  // Source: Siegmund's approximation cross-check values [COMPUTED] and Montgomery, Introduction to Statistical
  // Quality Control, two-sided tabular CUSUM, k = 0.5 [MEMORY, medium-high], via reference-checks.md sec. 7.1.
  it('matches the computed Siegmund values', () => {
    expect(cusumArlTwoSided(4, 0.5, 0)).toBeCloseTo(169.05, 1);
    expect(cusumArlTwoSided(4, 0.5, 0.5)).toBeCloseTo(26.64, 1);
    expect(cusumArlTwoSided(4, 0.5, 1)).toBeCloseTo(8.34, 1);
    expect(cusumArlTwoSided(5, 0.5, 0)).toBeCloseTo(469.11, 1);
    expect(cusumArlTwoSided(5, 0.5, 0.5)).toBeCloseTo(38.01, 1);
    expect(cusumArlTwoSided(5, 0.5, 1)).toBeCloseTo(10.34, 1);
  });
  it('is within 3% of the tabulated ARL0 168 (h = 4) and 465 (h = 5)', () => {
    expect(Math.abs(cusumArlTwoSided(4, 0.5, 0) / 168 - 1)).toBeLessThan(0.03);
    expect(Math.abs(cusumArlTwoSided(5, 0.5, 0) / 465 - 1)).toBeLessThan(0.03);
  });
  it('threshold for a wanted ARL0 inverts the ARL', () => {
    const h = cusumThresholdForArl(469.11, 0.5);
    expect(h).toBeCloseTo(5, 3);
    expect(cusumArlTwoSided(cusumThresholdForArl(1e6, 0.5), 0.5, 0)).toBeCloseTo(1e6, -1);
  });
  it('Monte Carlo in-control run length at h = 4 is near 168 (+-10%)', () => {
    // Source: the tabulated ARL0 168 above; 2000 seeded runs give a standard error of about 2.2%.
    const rnd = normalRng(2024);
    let total = 0;
    const runs = 2000;
    for (let r = 0; r < runs; r++) {
      let sh = 0, sl = 0, n = 0;
      for (;;) {
        n++;
        const z = rnd();
        sh = Math.max(0, sh + z - 0.5);
        sl = Math.max(0, sl - z - 0.5);
        if (sh > 4 || sl > 4) break;
      }
      total += n;
    }
    expect(Math.abs(total / runs / 168 - 1)).toBeLessThan(0.1);
  });
});

describe('two-sided detector', () => {
  it('finds one injected mean shift with its onset and direction', () => {
    const rnd = normalRng(99);
    const z = new Float64Array(3000);
    for (let i = 0; i < z.length; i++) z[i] = rnd() + (i >= 2000 && i < 2020 ? -3 : 0);
    const h = cusumThresholdForArl(3000 / 0.01, 0.5);
    const found = detectChanges(z, h, 0.5);
    expect(found.length).toBe(1);
    expect(found[0].direction).toBe(-1);
    expect(Math.abs(found[0].onset - 2000)).toBeLessThanOrEqual(3);
    expect(Math.abs(found[0].end - 2019)).toBeLessThanOrEqual(3);
  });
  it('raises no alarm on clean noise over several seeds (alpha = 1% each)', () => {
    let alarms = 0;
    for (const seed of [1, 2, 3, 4, 5, 6, 7, 8]) {
      const rnd = normalRng(seed);
      const z = new Float64Array(5000);
      for (let i = 0; i < z.length; i++) z[i] = rnd();
      alarms += detectChanges(z, cusumThresholdForArl(5000 / 0.01, 0.5), 0.5).length;
    }
    expect(alarms).toBe(0);
  });
});

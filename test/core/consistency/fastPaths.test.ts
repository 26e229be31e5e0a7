/**
 * The hand-tuned paths of the consistency stage give the same numbers, bit for bit, as the plain definitions they
 * replace: four lags per pass in the autocorrelations, the pruned Kolmogorov-Smirnov statistic, and the window
 * bounds taken from brackets instead of a chi-square quantile per window size. The references here are the plain
 * loops of the definitions (stats/autocorrelation.ts, stats/ks.ts, consistency/window.ts file comments) and the
 * chi-square interval of @stdlib (stats/chi2.ts), on seeded random data (constructed).
 */
import { describe, expect, it } from 'vitest';
import { autocorrelation, normalizedAutocorrelation } from '../../../extension/core/stats/autocorrelation';
import { ksStatistic } from '../../../extension/core/stats/ks';
import { chi2Cdf, chi2MeanInterval } from '../../../extension/core/stats/chi2';
import { slidingAverage, windowTest } from '../../../extension/core/consistency/window';
import { makeRng } from './rng';

/** The biased, mean-removed ACF exactly as defined: one plain pass per lag. */
function plainAcf(x: Float64Array, maxLag: number): number[] {
  const n = x.length;
  let mean = 0;
  for (let t = 0; t < n; t++) mean += x[t];
  mean /= n;
  const d = x.map((v) => v - mean);
  let c0 = 0;
  for (let t = 0; t < n; t++) c0 += d[t] * d[t];
  const out: number[] = [];
  for (let k = 1; k <= maxLag; k++) {
    if (k >= n || !(c0 > 0)) { out.push(NaN); continue; }
    let s = 0;
    for (let t = 0; t + k < n; t++) s += d[t] * d[t + k];
    out.push(s / c0);
  }
  return out;
}

/** Bar-Shalom's normalized autocorrelation exactly as defined: one plain pass per lag. */
function plainRho(nu: Float64Array, dof: number, count: number, maxLag: number): number[] {
  const energy = new Float64Array(count + 1);
  for (let k = 0; k < count; k++) {
    let e = 0;
    for (let c = 0; c < dof; c++) e += nu[k * dof + c] * nu[k * dof + c];
    energy[k + 1] = energy[k] + e;
  }
  const out: number[] = [];
  for (let j = 1; j <= maxLag; j++) {
    if (j >= count) { out.push(NaN); continue; }
    let cross = 0;
    for (let a = 0; a < (count - j) * dof; a++) cross += nu[a] * nu[a + j * dof];
    const den = Math.sqrt(energy[count - j] * (energy[count] - energy[j]));
    out.push(den > 0 ? cross / den : NaN);
  }
  return out;
}

describe('autocorrelations four lags per pass', () => {
  it('equal bit for bit to one pass per lag, for every length and lag count around the blocks of four', () => {
    const rng = makeRng(41);
    for (const n of [1, 2, 3, 4, 5, 6, 7, 9, 13, 40, 257, 2000]) {
      const x = Float64Array.from({ length: n }, () => rng.normal() + 0.3);
      for (const lags of [1, 3, 4, 5, 8, 11, 20, 23]) {
        expect(Array.from(autocorrelation(x, n, lags))).toEqual(plainAcf(x, lags));
        for (const dof of [1, 3]) {
          const count = Math.max(1, Math.floor(n / dof));
          const nu = Float64Array.from({ length: count * dof }, () => rng.normal());
          expect(Array.from(normalizedAutocorrelation(nu, dof, count, lags))).toEqual(plainRho(nu, dof, count, lags));
        }
      }
    }
  });
});

describe('pruned Kolmogorov-Smirnov statistic', () => {
  it('equal to the maximum over every point, on good and bad fits, with ties', () => {
    const rng = makeRng(7);
    for (const [n, dof, scale] of [[64, 1, 1], [65, 3, 1], [500, 1, 0.7], [5000, 1, 1], [5000, 3, 1.2], [3001, 2, 1]]) {
      const x = Float64Array.from({ length: n }, () => {
        let s = 0;
        for (let k = 0; k < dof; k++) { const z = rng.normal(); s += z * z; }
        return Math.round(s * scale * 1000) / 1000; // rounded: ties, as in a printed log
      }).sort();
      const cdf = (v: number): number => chi2Cdf(v, dof);
      let plain = 0;
      let calls = 0;
      for (let i = 0; i < n; i++) {
        const f = cdf(x[i]);
        plain = Math.max(plain, (i + 1) / n - f, f - i / n);
      }
      const counted = (v: number): number => { calls++; return cdf(v); };
      expect(ksStatistic(x, n, counted)).toBe(plain);
      if (n >= 3000) expect(calls).toBeLessThan(n); // the point of it: not every CDF value is needed
    }
  });
});

describe('window bounds from brackets', () => {
  it('the share of full windows inside 95% equals the one from a quantile per window size', () => {
    const rng = makeRng(3);
    for (const [dof, scale] of [[1, 1], [1, 1.3], [3, 0.8], [2, 1]]) {
      const n = 4000;
      const t = new Float64Array(n);
      const nis = new Float64Array(n);
      let time = 0;
      for (let i = 0; i < n; i++) {
        time += 0.01 + 0.04 * rng.uniform(); // irregular updates: many window sizes
        t[i] = time;
        let s = 0;
        for (let k = 0; k < dof; k++) { const z = rng.normal(); s += z * z; }
        // a slow drift in the scale, so windows fall inside, outside and near the bounds
        nis[i] = s * scale * (1 + 0.5 * Math.sin(i / 300));
      }
      for (const spec of [{ kind: 'seconds', size: 2 }, { kind: 'updates', size: 37 }] as const) {
        const quick = slidingAverage(t, nis, n, dof, spec, 0.95, undefined, [1500], false);
        const full = slidingAverage(t, nis, n, dof, spec, 0.95, undefined, [1500], true);
        expect(quick.full).toBe(full.full);
        expect(quick.fullInside95).toBe(full.fullInside95);
        // and both equal a direct count with the interval of each window's count (stats/chi2.ts)
        let inside = 0;
        for (let i = 0; i < n; i++) {
          if (Number.isNaN(full.lo[i])) continue;
          const [lo, hi] = chi2MeanInterval(0.95, dof, full.count[i]);
          if (full.mean[i] >= lo && full.mean[i] <= hi) inside++;
        }
        expect(quick.fullInside95).toBe(inside);
      }
    }
  });

  it('the windows flagged by the corrected test are those outside their exact bounds', () => {
    const rng = makeRng(5);
    const n = 3000;
    const k = 40;
    const t = Float64Array.from({ length: n }, (_, i) => i * 0.1);
    const nis = Float64Array.from({ length: n }, (_, i) => {
      const z = rng.normal();
      return z * z * (i > 1000 && i < 1200 ? 2.5 : i > 2000 && i < 2300 ? 0.3 : 1);
    });
    const r = windowTest(t, nis, n, 1, { kind: 'updates', size: k }, 0.01);
    // Windows of k updates every k/2 (window.ts): flagged when the average lies outside chi2(k)/k at 1 - alpha/M.
    const stride = k / 2;
    const flagged: number[] = [];
    let m = 0;
    for (let a = 0; a < n; a += stride) { m++; if (a + k >= n) break; }
    expect(r.tests).toBe(m);
    for (let a = 0, w = 0; w < m; a += stride, w++) {
      const b = Math.min(n, a + k);
      let s = 0;
      for (let i = a; i < b; i++) s += nis[i];
      const [lo, hi] = chi2MeanInterval(1 - 0.01 / m, 1, b - a);
      const mean = s / (b - a);
      if (mean > hi || mean < lo) flagged.push(a);
    }
    expect(flagged.length).toBeGreaterThan(0);
    const covered = r.runs.reduce((sum, run) => sum + run.windows, 0);
    expect(covered).toBe(flagged.length);
    for (const run of r.runs) expect(flagged).toContain(run.first);
  });

  it('windows placed by bisection on sorted times are the windows the linear scan places', () => {
    const rng = makeRng(9);
    const n = 5000;
    const t = new Float64Array(n);
    let time = 100;
    for (let i = 0; i < n; i++) {
      time += rng.uniform() < 0.002 ? 30 * rng.uniform() : rng.uniform() < 0.1 ? 0 : 0.02 * rng.uniform(); // gaps, ties
      t[i] = time;
    }
    const nis = Float64Array.from({ length: n }, (_, i) => { const z = rng.normal(); return z * z * (i % 1700 < 200 ? 3 : 1); });
    for (const size of [0.05, 1, 7.5, 200]) {
      const spec = { kind: 'seconds', size } as const;
      const linear = windowTest(t, nis, n, 1, spec, 0.01, undefined, [2500], false);
      const bisected = windowTest(t, nis, n, 1, spec, 0.01, undefined, [2500], true);
      expect(bisected).toEqual(linear);
      expect(linear.tests).toBeGreaterThan(0);
    }
  });
});

/**
 * NEES bounds and the single-run windowed test with an effective sample size.
 * Bar-Shalom intervals: reference-checks.md sec 2.2. Simulations: seeded, of our own (simulate.ts).
 */
import { describe, expect, it } from 'vitest';
import { chi2MeanInterval } from '../../../extension/core/stats/chi2';
import {
  effectiveSampleSize, errorAutocorrelations, meanInterval, neesAutocorrelation, normalisedErrorAutocorrelations, DIRECT_ACF_LAGS,
} from '../../../extension/core/errors/nees';
import { analyzeErrors } from '../../../extension/core/errors/index';
import { resolveSettings } from '../../../extension/core/settings';
import { simulateRun } from './simulate';
import { gaussian, seededRandom } from '../geometry/helpers';

describe('Bar-Shalom average NEES / NIS intervals (reference-checks.md sec 2.2, [COMPUTED] R and jStat, tol 1e-4)', () => {
  const rows: [string, number, number, [number, number]][] = [
    ['NEES n_x = 2, N = 50', 2, 50, [1.4844, 2.5912]],
    ['NEES n_x = 4, N = 50', 4, 50, [3.2546, 4.8212]],
    ['NEES n_x = 3, N = 50', 3, 50, [2.3597, 3.716]],
    ['NEES n_x = 6, N = 50', 6, 50, [5.0782, 6.9975]],
    ['NIS n_z = 1, N = 50', 1, 50, [0.6471, 1.4284]],
    ['time-average NIS n_z = 2, K = 100', 2, 100, [1.6273, 2.4106]],
    ['single-step NEES n_x = 2', 2, 1, [0.0506, 7.3778]],
  ];
  it.each(rows)('%s', (_name, dof, N, [lo, hi]) => {
    const [a, b] = chi2MeanInterval(0.95, dof, N);
    expect(Math.abs(a - lo)).toBeLessThan(1e-4);
    expect(Math.abs(b - hi)).toBeLessThan(1e-4);
    // the effective-sample-size interval reduces to the same when n_eff = N
    const [c, d] = meanInterval(0.95, dof, N);
    expect(Math.abs(c - lo)).toBeLessThan(1e-4);
    expect(Math.abs(d - hi)).toBeLessThan(1e-4);
  });
  it("the book's rounded [1.5, 2.6] for n_x = 2, N = 50 (from memory, tol 0.05)", () => {
    const [a, b] = chi2MeanInterval(0.95, 2, 50);
    expect(Math.abs(a - 1.5)).toBeLessThan(0.05);
    expect(Math.abs(b - 2.6)).toBeLessThan(0.05);
  });
});

describe('effective sample size', () => {
  it('white errors: n_eff is close to K', () => {
    const g = gaussian(seededRandom(3));
    const z = [Float64Array.from({ length: 5000 }, g), Float64Array.from({ length: 5000 }, g)];
    const rho = neesAutocorrelation(z, 0, 5000);
    expect(effectiveSampleSize(50, rho)).toBeGreaterThan(45);
  });
  it('AR(1) errors with a = 0.9: rho_NEES(k) ≈ a^(2k), so a long window has n_eff ≈ K (1 - a^2)/(1 + a^2)', () => {
    // common practice: corr(e^2(t), e^2(t+k)) = corr(e(t), e(t+k))^2 for Gaussian e; variance of the mean of a
    // stationary sequence = (sigma^2/K)(1 + 2 sum rho_k)
    const g = gaussian(seededRandom(11));
    const n = 200000, a = 0.9;
    const z = [new Float64Array(n)];
    let e = g();
    for (let k = 0; k < n; k++) { e = a * e + Math.sqrt(1 - a * a) * g(); z[0][k] = e; }
    const rho = neesAutocorrelation(z, 0, n);
    const K = 100000;
    const expected = (K * (1 - a * a)) / (1 + a * a);
    expect(Math.abs(effectiveSampleSize(K, rho) / expected - 1)).toBeLessThan(0.1);
  });
});

/**
 * The autocorrelations written out plainly from their definition (common practice, Box-Jenkins: mean removed, biased
 * estimator dividing by the series length, pairs with a missing value skipped; truncated at the first lag whose
 * component average is not positive), for the hand-tuned version in nees.ts to match bit for bit.
 */
function plainAutocorrelations(z: Float64Array[], i0: number, i1: number, maxLagCap = 500): number[][] {
  const m = i1 - i0;
  const maxLag = Math.min(maxLagCap, Math.floor(m / 4));
  const out: number[][] = z.map(() => []);
  const stats = z.map((c) => {
    let s = 0, cnt = 0;
    for (let k = i0; k < i1; k++) if (Number.isFinite(c[k])) { s += c[k]; cnt++; }
    const mean = cnt > 0 ? s / cnt : NaN;
    let v = 0, cv = 0;
    for (let k = i0; k < i1; k++) if (Number.isFinite(c[k])) { v += (c[k] - mean) * (c[k] - mean); cv++; }
    return { mean, variance: cv > 1 ? v / cv : NaN };
  });
  for (let lag = 1; lag <= maxLag; lag++) {
    const rs = z.map((c, i) => {
      const { mean, variance } = stats[i];
      if (!(variance > 0)) return 0;
      let s = 0;
      for (let k = i0; k + lag < i1; k++) if (Number.isFinite(c[k]) && Number.isFinite(c[k + lag])) s += (c[k] - mean) * (c[k + lag] - mean);
      return s / (m * variance);
    });
    if (!(rs.reduce((a, b) => a + b, 0) / rs.length > 0)) break;
    rs.forEach((r, i) => out[i].push(r));
  }
  return out;
}

/**
 * `got` against the plain definition: the same lags (the same truncation), the first DIRECT_ACF_LAGS bit for bit (summed
 * directly, in time order), the rest to 1e-12 (they come from an FFT of the segment, whose rounding is about 1e-16
 * of the lag-0 sum per value; r is that sum's share, so 1e-12 leaves a wide margin and still catches any wrong lag).
 */
function expectAutocorrelations(got: Float64Array[], want: number[][]): void {
  expect(got.map((r) => r.length)).toEqual(want.map((r) => r.length));
  got.forEach((r, i) => r.forEach((v, k) => {
    if (k < DIRECT_ACF_LAGS) expect(v, `component ${i} lag ${k + 1}`).toBe(want[i][k]);
    else expect(Math.abs(v - want[i][k]), `component ${i} lag ${k + 1}`).toBeLessThan(1e-12);
  }));
}

describe('error autocorrelations: the blocked and FFT sums equal the plain definition', () => {
  const g = gaussian(seededRandom(5));
  const n = 6000;
  const ar = (a: number): Float64Array => {
    const c = new Float64Array(n);
    let e = g();
    for (let k = 0; k < n; k++) { e = a * e + Math.sqrt(1 - a * a) * g(); c[k] = e; }
    return c;
  };
  it('long-memory AR(1) components without gaps (hundreds of lags, blocks of four and a tail)', () => {
    const z = [ar(0.995), ar(0.99), ar(0.998)];
    const got = errorAutocorrelations(z, 100, n);
    const want = plainAutocorrelations(z, 100, n);
    expect(want[0].length).toBeGreaterThan(50);
    expectAutocorrelations(got, want);
  });
  it('components with missing values, and one constant component', () => {
    const z = [ar(0.99), ar(0.9), new Float64Array(n).fill(2)];
    for (let k = 0; k < n; k += 37) z[0][k] = NaN;
    for (let k = 5; k < n; k += 101) z[1][k] = Infinity;
    const got = errorAutocorrelations(z, 0, n);
    const want = plainAutocorrelations(z, 0, n);
    expect(want[0].length).toBeGreaterThan(10);
    expectAutocorrelations(got, want);
  });
  it('normalised components e / sigma equal those of the divided columns; a component without sigma counts as 0', () => {
    const e = [ar(0.99), ar(0.98)];
    const sigma = [Float64Array.from({ length: n }, (_, k) => 0.5 + (k % 7) / 10), Float64Array.from({ length: n }, () => 2)];
    sigma[0][17] = 0; // an infinite z: skipped
    const z = e.map((c, i) => Float64Array.from(c, (v, k) => v / sigma[i][k]));
    expectAutocorrelations(normalisedErrorAutocorrelations(e, sigma, 0, n), plainAutocorrelations(z, 0, n));
    // three components (the usual block, summed three at a time), with a missing error and a zero sigma
    const e3 = [ar(0.99), ar(0.95), ar(0.97)];
    e3[1][40] = NaN;
    const s3 = [sigma[0], sigma[1], Float64Array.from({ length: n }, (_, k) => (k === 99 ? 0 : 1.5))];
    const z3 = e3.map((c, i) => Float64Array.from(c, (v, k) => v / s3[i][k]));
    expectAutocorrelations(normalisedErrorAutocorrelations(e3, s3, 0, n), plainAutocorrelations(z3, 0, n));
    const withMissing = normalisedErrorAutocorrelations(e, [sigma[0], undefined], 0, n);
    expectAutocorrelations(withMissing, plainAutocorrelations([z[0], new Float64Array(n).fill(NaN)], 0, n));
  });
});

describe('windowed NEES test on seeded simulated runs', () => {
  const settings = resolveSettings({ window_s: 5 });

  it('consistent run: about 95% of windows inside their 95% bounds, no finding', () => {
    let inside = 0, total = 0;
    for (let seed = 1; seed <= 10; seed++) {
      const out = analyzeErrors(simulateRun({ seed }), settings);
      expect(out.findings.filter((f) => f.kind === 'inconsistent')).toEqual([]);
      const w = out.block?.position?.nees?.windows;
      if (!w || w.inside95 === undefined) throw new Error('no windows');
      inside += w.inside95 * w.count; total += w.count;
    }
    // 1200 windows: a binomial 95% share has sd ~0.6%; the n_eff approximation is allowed +-3%
    expect(inside / total).toBeGreaterThan(0.92);
    expect(inside / total).toBeLessThan(0.98);
  });

  it('covariance scaled by 1/4 in [300, 360] s: flagged there and nowhere else', () => {
    for (const seed of [21, 22, 23]) {
      const out = analyzeErrors(simulateRun({ seed, scaled: { t0: 300, t1: 360, factor: 0.5 } }), settings);
      const inc = out.findings.filter((f) => f.kind === 'inconsistent');
      expect(inc.length).toBeGreaterThan(0);
      for (const f of inc) {
        expect(f.channel).toBe('position');
        expect(f.side).toBe('overconfident');
        expect(f.t as number).toBeGreaterThanOrEqual(300 - 5);
        expect(f.tEnd as number).toBeLessThanOrEqual(360 + 5);
      }
      const covered = inc.reduce((s, f) => s + ((f.tEnd as number) - (f.t as number)), 0);
      expect(covered).toBeGreaterThan(30); // at least half of the 60 s interval
    }
  });

  it('covariance scaled by 4 (pessimistic) in one interval: flagged there as pessimistic', () => {
    const out = analyzeErrors(simulateRun({ seed: 5, scaled: { t0: 300, t1: 360, factor: 2 } }), resolveSettings({ window_s: 30 }));
    const inc = out.findings.filter((f) => f.kind === 'inconsistent');
    expect(inc.length).toBeGreaterThan(0);
    for (const f of inc) {
      expect(f.side).toBe('pessimistic');
      expect(f.t as number).toBeGreaterThanOrEqual(270);
      expect(f.tEnd as number).toBeLessThanOrEqual(390);
    }
  });

  it('false-finding rate over 300 consistent seeded runs is at most familyAlpha = 1%', () => {
    let runsWithFinding = 0;
    const seeds = 300;
    for (let seed = 1000; seed < 1000 + seeds; seed++) {
      const out = analyzeErrors(simulateRun({ seed, epochs: 3000 }), settings);
      if (out.findings.some((f) => f.kind === 'inconsistent')) runsWithFinding++;
    }
    console.log(`windowed NEES: ${runsWithFinding} of ${seeds} consistent runs raised a finding`);
    expect(runsWithFinding / seeds).toBeLessThanOrEqual(0.01);
  });
});

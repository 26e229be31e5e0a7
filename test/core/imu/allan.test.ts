import { describe, expect, it } from 'vitest';
import { allanDeviation, allanDeviationNonOverlapping, allanEdf, octaveFactors } from '../../../extension/core/imu/allan';
import { readNoiseFigures } from '../../../extension/core/imu/noiseFigures';
import { normalRng } from './rng';

/** Relative closeness. */
function expectRel(actual: number, expected: number, tol: number): void {
  expect(Math.abs(actual - expected) / Math.abs(expected)).toBeLessThanOrEqual(tol);
}

/** Value of a curve at tau (exact match of the averaging time). */
function at(curve: { tau_s: Float64Array; adev: Float64Array }, tau: number): number {
  const i = Array.from(curve.tau_s).findIndex((t) => Math.abs(t - tau) < 1e-9 * tau);
  expect(i).toBeGreaterThanOrEqual(0);
  return curve.adev[i];
}

describe('NBS 10-point data set', () => {
  // Source: W. J. Riley, NIST SP 1065 (2008) p. 107-108 and "The Calculation of Time Domain Frequency Stability"
  // (Tables I and III), via reference-checks.md sec. 3.3 [READ + COMPUTED]; tol 1e-6 relative.
  const y = new Float64Array([892, 809, 823, 798, 671, 644, 883, 903, 677]);
  it('non-overlapping ADEV at tau 1 and 2', () => {
    const c = allanDeviationNonOverlapping(y, 1, [1, 2]);
    expectRel(at(c, 1), 91.22945, 1e-6);
    expectRel(at(c, 2), 115.8082, 1e-6);
  });
  it('overlapping ADEV at tau 1 and 2', () => {
    const c = allanDeviation(y, 1, [1, 2]);
    expectRel(at(c, 1), 91.22945, 1e-6);
    expectRel(at(c, 2), 85.95287, 1e-6);
  });
});

describe('NBS 1000-point data set', () => {
  // Source: Riley, NIST SP 1065 sec. 3.3 via reference-checks.md sec. 3.3: generator n0 = 1234567890,
  // n_{i+1} = 16807 n_i mod 2147483647, y_i = n_i / 2147483647, i = 0..999; tol 1e-6 relative.
  const y = new Float64Array(1000);
  let n = 1234567890;
  const seq: number[] = [];
  for (let i = 0; i < 1000; i++) {
    y[i] = n / 2147483647;
    seq.push(n);
    n = (16807 * n) % 2147483647; // exact in double: 16807 * 2^31 < 2^53
  }
  it('generator check values n1..n3', () => {
    // Source: reference-checks.md sec. 3.3 [READ and COMPUTED]
    expect(seq.slice(1, 4)).toEqual([395529916, 1209410747, 633705974]);
  });
  it('non-overlapping ADEV at tau 1, 10, 100', () => {
    const c = allanDeviationNonOverlapping(y, 1, [1, 10, 100]);
    expectRel(at(c, 1), 2.922319e-1, 1e-6);
    expectRel(at(c, 10), 9.965736e-2, 1e-6);
    expectRel(at(c, 100), 3.897804e-2, 1e-6);
  });
  it('overlapping ADEV at tau 1, 10, 100', () => {
    const c = allanDeviation(y, 1, [1, 10, 100]);
    expectRel(at(c, 1), 2.922319e-1, 1e-6);
    expectRel(at(c, 10), 9.159953e-2, 1e-6);
    expectRel(at(c, 100), 3.241343e-2, 1e-6);
  });
});

describe('rate ramp, exact case', () => {
  // Source: reference-checks.md sec. 3.1 [CONSTRUCTED + COMPUTED]: y_k = R k tau0 gives ADEV = OADEV = R tau / sqrt(2)
  // for every m; R = 0.01, tau0 = 1, N = 1000: sigma(1) = 0.0070710678, sigma(7) = 0.0494974747,
  // sigma(50) = 0.3535533906; tol 1e-12 relative.
  const y = new Float64Array(1000);
  for (let k = 0; k < 1000; k++) y[k] = 0.01 * k;
  for (const estimator of [allanDeviation, allanDeviationNonOverlapping]) {
    it(`${estimator.name} equals R tau / sqrt(2)`, () => {
      const c = estimator(y, 1, [1, 7, 50]);
      expectRel(at(c, 1), 0.01 / Math.SQRT2, 1e-12);
      expectRel(at(c, 7), 0.07 / Math.SQRT2, 1e-12);
      expectRel(at(c, 50), 0.5 / Math.SQRT2, 1e-12);
      expectRel(at(c, 7), 0.0494974747, 1e-9); // printed to 10 digits
    });
  }
  it('holds for a large offset and a long series (compensated sums)', () => {
    const big = new Float64Array(200000);
    for (let k = 0; k < big.length; k++) big[k] = 1e3 + 1e-4 * k * 0.01;
    const c = allanDeviation(big, 0.01, [0.01, 1, 100]);
    for (const tau of [0.01, 1, 100]) expectRel(at(c, tau), (1e-4 * tau) / Math.SQRT2, 1e-9);
  });
});

describe('seeded white noise and random walk', () => {
  // Source for the slopes and read-offs: IEEE Std 952-1997 Annex C (from memory) via reference-checks.md sec. 3.1:
  // white rate noise N gives sigma = N / sqrt(tau) (slope -1/2, sigma(1 s) = N); a rate random walk K gives
  // sigma = K sqrt(tau / 3) (slope +1/2, sigma(3 s) = K).
  it('white noise: slope -1/2 and N within 3%', () => {
    const N = 0.01; // rad/s/sqrt(Hz)
    const tau0 = 0.01;
    const rnd = normalRng(12345);
    const y = new Float64Array(400000);
    for (let i = 0; i < y.length; i++) y[i] = 0.3 + (N / Math.sqrt(tau0)) * rnd();
    const c = allanDeviation(y, tau0);
    expect(Array.from(c.m)).toEqual(octaveFactors(200000));
    // slope between tau = 0.01 s and 10.24 s
    const i0 = 0;
    const i1 = Array.from(c.m).indexOf(1024);
    const slope = Math.log(c.adev[i1] / c.adev[i0]) / Math.log(c.tau_s[i1] / c.tau_s[i0]);
    expect(Math.abs(slope + 0.5)).toBeLessThan(0.03);
    const fig = readNoiseFigures(c, 'gyro');
    expect(fig.N).toBeDefined();
    // 3%: the read-off averages many points; the single point at tau ~ 1 s alone has EDF ~ 6000 (1.3% 1-sigma)
    expectRel(fig.N!.value, N, 0.03);
    expect(fig.N!.tauRange_s[0]).toBeCloseTo(tau0, 12);
    expect(fig.K).toBeUndefined();
    // a pure white-noise curve keeps falling: B is only bounded
    expect(fig.B).toBeUndefined();
    expect(fig.bUpperBound).toBeGreaterThan(0);
    // error bars bracket the estimate and shrink with EDF
    for (let i = 0; i < c.tau_s.length; i++) {
      expect(c.lo[i]).toBeLessThan(c.adev[i]);
      expect(c.hi[i]).toBeGreaterThan(c.adev[i]);
    }
    // the 1-sigma bars of the points should cover N / sqrt(tau) for most points (68% nominal)
    let covered = 0;
    for (let i = 0; i < c.tau_s.length; i++) {
      const truth = N / Math.sqrt(c.tau_s[i]);
      if (c.lo[i] <= truth && truth <= c.hi[i]) covered++;
    }
    expect(covered / c.tau_s.length).toBeGreaterThan(0.4);
  });

  it('random walk: slope +1/2 and K within 10%', () => {
    const K = 1e-4; // rad/s/sqrt(s)
    const tau0 = 0.01;
    const rnd = normalRng(777);
    const y = new Float64Array(1000000);
    let b = 0;
    for (let i = 0; i < y.length; i++) { b += K * Math.sqrt(tau0) * rnd(); y[i] = b; }
    const c = allanDeviation(y, tau0);
    const i0 = Array.from(c.m).indexOf(64);
    const i1 = Array.from(c.m).indexOf(16384);
    const slope = Math.log(c.adev[i1] / c.adev[i0]) / Math.log(c.tau_s[i1] / c.tau_s[i0]);
    expect(Math.abs(slope - 0.5)).toBeLessThan(0.08);
    const fig = readNoiseFigures(c, 'gyro');
    expect(fig.K).toBeDefined();
    expectRel(fig.K!.value, K, 0.1);
    expect(fig.N).toBeUndefined();
  });

  it('white noise plus random walk: both N and K, and datasheet units', () => {
    const N = 0.005 * (Math.PI / 180); // 0.005 deg/s/sqrt(Hz) = 0.3 deg/sqrt(h)
    const K = 2e-5;
    const tau0 = 0.005;
    const rnd = normalRng(4242);
    const y = new Float64Array(2000000);
    let b = 0;
    for (let i = 0; i < y.length; i++) { b += K * Math.sqrt(tau0) * rnd(); y[i] = b + (N / Math.sqrt(tau0)) * rnd(); }
    const c = allanDeviation(y, tau0, undefined, { perOctave: 2 });
    const fig = readNoiseFigures(c, 'gyro', { N: N, K: K });
    expectRel(fig.N!.value, N, 0.05);
    expectRel(fig.K!.value, K, 0.2);
    expect(fig.N!.ratio).toBeCloseTo(fig.N!.value / N, 12);
    const arw = fig.N!.datasheet.find((d) => d.unit === 'deg/sqrt(h)')!;
    // Source: reference-checks.md sec. 3.1/7.2: ARW deg/sqrt(h) = noise density deg/s/sqrt(Hz) x 60 -> 0.3
    expectRel(arw.value, 0.3, 0.05);
    // the curve has an interior minimum between the two lines: B is read there
    expect(fig.B).toBeDefined();
    expect(fig.N!.tauRange_s[1]).toBeLessThan(fig.B!.tauRange_s[0] + 1e-12);
    expect(fig.K!.tauRange_s[0]).toBeGreaterThan(fig.B!.tauRange_s[1] - 1e-12);
  });
});

describe('bias instability read-off on a constructed curve', () => {
  it('a flat floor sigma = 0.664 B gives B', () => {
    // Source: reference-checks.md sec. 3.1: sigma_flat = sqrt(2 ln2 / pi) B = 0.6642824703 B.
    const B = 1e-4;
    const taus = [0.01, 0.1, 1, 10, 100, 1000, 10000];
    const N = 1e-6;
    const K = 1e-9;
    const adev = taus.map((t) => Math.sqrt(N * N / t + (0.6642824703 * B) ** 2 + (K * K * t) / 3));
    const k = taus.length;
    const curve = {
      tau_s: new Float64Array(taus), adev: new Float64Array(adev), lo: new Float64Array(k), hi: new Float64Array(k),
      m: new Float64Array(taus.map((t) => t / 0.01)), terms: new Float64Array(k), edf: new Float64Array(k).fill(100),
      noise: [], tau0_s: 0.01, samples: 1e6, dropped: 0, overlapping: true, confidence: 0.683,
    };
    const fig = readNoiseFigures(curve, 'accel', { B: 2 * B });
    expectRel(fig.B!.value, B, 1e-6);
    expect(fig.B!.ratio).toBeCloseTo(0.5, 6);
    expect(fig.B!.unit).toBe('m/s^2');
    // 1e-4 m/s^2 = 10.197 ug (g = 9.80665)
    expectRel(fig.B!.datasheet[0].value, fig.B!.value / 9.80665e-6, 1e-12);
    expect(fig.B!.datasheet[0].unit).toBe('ug');
  });
});

describe('EDF against Monte Carlo', () => {
  // Outside check by simulation: for a chi-square variable with edf degrees of freedom, var(s2) / mean(s2)^2 = 2 / edf.
  // 600 seeded runs give the ratio to about +-6% (1 sigma); the check allows 20%.
  function mcEdf(make: (rnd: () => number, n: number) => Float64Array, n: number, m: number): number {
    const rnd = normalRng(31337 + m);
    const v: number[] = [];
    for (let r = 0; r < 600; r++) v.push(allanDeviation(make(rnd, n), 1, [m]).adev[0] ** 2);
    const mean = v.reduce((a, b) => a + b, 0) / v.length;
    const variance = v.reduce((a, b) => a + (b - mean) ** 2, 0) / (v.length - 1);
    return (2 * mean * mean) / variance;
  }
  const white = (rnd: () => number, n: number): Float64Array => Float64Array.from({ length: n }, () => rnd());
  const walk = (rnd: () => number, n: number): Float64Array => { let b = 0; return Float64Array.from({ length: n }, () => (b += rnd())); };
  it('white FM, N = 513 phase points, m = 8', () => {
    const formula = allanEdf(513, 8, 'whiteFM');
    const mc = mcEdf(white, 512, 8); // 90.4 against 92.2 from the formula with these seeds
    expect(Math.abs(mc / formula - 1)).toBeLessThan(0.2);
  });
  it('random-walk FM, N = 513 phase points, m = 32', () => {
    const formula = allanEdf(513, 32, 'randomWalkFM');
    const mc = mcEdf(walk, 512, 32); // 13.1 against 13.3
    expect(Math.abs(mc / formula - 1)).toBeLessThan(0.2);
  });
});

describe('EDF', () => {
  it('white FM simple approximation is about 3(N-1)/(2m) for m >> 1', () => {
    // Source: Riley, NIST SP 1065 Table 5 (from memory; checked against the allantools transcription edf_simple).
    const N = 100001;
    expectRel(allanEdf(N, 100, 'whiteFM'), (3 * (N - 1)) / 200 - 2, 1e-3);
    expect(allanEdf(N, 100, 'randomWalkFM')).toBeGreaterThan(900);
    expect(allanEdf(10, 4, 'randomWalkFM')).toBeGreaterThanOrEqual(1);
  });
});

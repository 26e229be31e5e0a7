import { describe, expect, it } from 'vitest';
import {
  analyzeChannels, averageAcrossRuns, monteCarloInsideShare, monteCarloNisBounds,
} from '../../../extension/core/consistency/index';
import { resolveSettings } from '../../../extension/core/settings';
import { chi2MeanInterval } from '../../../extension/core/stats/chi2';
import { makeChannel, makeLog } from './makeLog';
import { simulateChannel } from './simulate';

const settings = resolveSettings();

describe('consistent simulated run (constructed: innovations drawn from the logged S)', () => {
  for (const dof of [1, 3]) {
    it(`${dof} dof: ~95% of NIS windows inside their 95% bounds, no inconsistent/not-white/bias finding`, () => {
      const ch = simulateChannel({ seed: 11 + dof, duration_s: 600, rate_hz: 10, dof });
      const out = analyzeChannels(makeLog([ch]), settings);
      const rep = out.block?.[0];
      expect(rep).toBeDefined();
      if (!rep) return;
      const nis = rep.nis as { mean: number; inside95: number; window: { inside95: number; full: number; tests: number } };
      // Mean of chi-square(dof) is dof: 6000 updates, sd of the mean sqrt(2 dof / 6000).
      expect(Math.abs(nis.mean - dof)).toBeLessThan(4 * Math.sqrt((2 * dof) / 6000));
      expect(Math.abs(nis.inside95 - 0.95)).toBeLessThan(0.015);
      // Sliding 5 s windows (50 updates): about 95% inside the chi2(50 dof)/50 band; 120 independent windows, so
      // the share has sd ~ 0.02: allow 0.05.
      expect(nis.window.full).toBeGreaterThan(5000);
      expect(Math.abs(nis.window.inside95 - 0.95)).toBeLessThan(0.05);
      expect(nis.window.tests).toBeGreaterThan(200);
      const kinds = out.findings.map((f) => f.kind);
      expect(kinds).not.toContain('inconsistent');
      expect(kinds).not.toContain('not-white');
      expect(kinds).not.toContain('innovation-bias');
      expect(kinds).not.toContain('bad-covariance');
      // Outliers at the 99.9% gate: about 6 of 6000.
      expect(rep.outliers).toBeLessThan(20);
      expect(out.findings.filter((f) => f.kind === 'outlier').length).toBe(rep.outliers);
      // Series keys.
      const keys = out.series.map((s) => s.key);
      expect(keys).toContain('nis/sim');
      expect(keys).toContain('nisWindow/sim');
      for (let c = 0; c < dof; c++) expect(keys).toContain(`innovation/sim/${c}`);
      const win = out.series.find((s) => s.key === 'nisWindow/sim');
      // Band of a full window equals chi2(50 dof)/50 (Bar-Shalom sec 5.4; chi2MeanInterval tested against sec 2.2).
      const last = (win?.x.length ?? 0) - 1;
      expect(win?.lo?.[last]).toBeCloseTo(chi2MeanInterval(0.95, dof, 50)[0], 12);
      expect(win?.hi?.[last]).toBeCloseTo(chi2MeanInterval(0.95, dof, 50)[1], 12);
    });
  }
});

describe('S scaled by 1/4 in one interval (constructed)', () => {
  for (const dof of [1, 3]) {
    it(`${dof} dof: flagged overconfident there and nowhere else`, () => {
      const ch = simulateChannel({ seed: 5 + dof, duration_s: 300, rate_hz: 10, dof, scaleS: { from_s: 100, to_s: 130, factor: 0.25 } });
      const out = analyzeChannels(makeLog([ch]), settings);
      const inc = out.findings.filter((f) => f.kind === 'inconsistent');
      expect(inc.length).toBe(1);
      const f = inc[0];
      expect(f.side).toBe('overconfident');
      expect(f.channel).toBe('sim');
      // Windows are 5 s placed every 2.5 s: the flagged run may start up to one window early and end one late.
      expect(f.t ?? NaN).toBeGreaterThanOrEqual(100 - 5);
      expect(f.t ?? NaN).toBeLessThanOrEqual(100 + 2.5);
      expect(f.tEnd ?? NaN).toBeGreaterThanOrEqual(130 - 2.5);
      expect(f.tEnd ?? NaN).toBeLessThanOrEqual(130 + 5);
      expect(f.score ?? 0).toBeGreaterThan(2 * dof);
      expect(f.message).toMatch(/overconfident/);
    });
  }

  it('S scaled by 4 (pessimistic) is flagged below the bound', () => {
    const ch = simulateChannel({ seed: 77, duration_s: 300, rate_hz: 10, scaleS: { from_s: 200, to_s: 240, factor: 4 } });
    const out = analyzeChannels(makeLog([ch]), settings);
    const inc = out.findings.filter((f) => f.kind === 'inconsistent');
    expect(inc.length).toBe(1);
    expect(inc[0].side).toBe('pessimistic');
    expect(inc[0].t ?? NaN).toBeGreaterThanOrEqual(195);
    expect(inc[0].tEnd ?? NaN).toBeLessThanOrEqual(245);
  });

  it('windows in updates (settings.windowUpdates) find the same interval', () => {
    const ch = simulateChannel({ seed: 8, duration_s: 300, rate_hz: 10, scaleS: { from_s: 100, to_s: 130, factor: 0.25 } });
    const out = analyzeChannels(makeLog([ch]), resolveSettings({ windowUpdates: 40 }));
    const inc = out.findings.filter((f) => f.kind === 'inconsistent');
    expect(inc.length).toBe(1);
    expect(inc[0].t ?? NaN).toBeGreaterThanOrEqual(96);
    expect(inc[0].tEnd ?? NaN).toBeLessThanOrEqual(134);
  });
});

describe('family-wise false-finding rate over many consistent runs', () => {
  it('at most 1% per channel (+ binomial margin) over 200 seeded short runs', () => {
    // 200 consistent runs of 60 s at 10 Hz. If the true rate were exactly 1%, the count of runs with a false
    // `inconsistent` finding is Binomial(200, 0.01): mean 2, P(X >= 7) = 0.0045. So more than 6 means the
    // correction does not hold; with the Bonferroni bound the expected count is below 2.
    // The same bound holds for the other family-corrected findings, `not-white` and `innovation-bias`.
    const flagged = { inconsistent: 0, 'not-white': 0, 'innovation-bias': 0 };
    for (let seed = 1000; seed < 1200; seed++) {
      const ch = simulateChannel({ seed, duration_s: 60, rate_hz: 10, dof: seed % 2 === 0 ? 1 : 2 });
      const out = analyzeChannels(makeLog([ch]), settings);
      for (const kind of Object.keys(flagged) as (keyof typeof flagged)[]) {
        if (out.findings.some((f) => f.kind === kind)) flagged[kind]++;
      }
    }
    expect(flagged.inconsistent).toBeLessThanOrEqual(6);
    expect(flagged['not-white']).toBeLessThanOrEqual(6);
    expect(flagged['innovation-bias']).toBeLessThanOrEqual(6);
  });

  it('the correction is calibrated, not vacuous: familyAlpha 0.2 flags about 20% of consistent runs', () => {
    // Binomial(200, <= 0.2): mean <= 40, sd ~ 5.7. Above 57 (3 sd) the bound fails; below 10 the test would be so
    // conservative that it has little power.
    let flagged = 0;
    const loose = resolveSettings({ familyAlpha: 0.2 });
    for (let seed = 2000; seed < 2200; seed++) {
      const out = analyzeChannels(makeLog([simulateChannel({ seed, duration_s: 60, rate_hz: 10 })]), loose);
      if (out.findings.some((f) => f.kind === 'inconsistent')) flagged++;
    }
    expect(flagged).toBeLessThanOrEqual(57);
    expect(flagged).toBeGreaterThanOrEqual(10);
  });
});

describe('whiteness and bias (constructed)', () => {
  it('AR(1) innovations (a = 0.3) are not white; white ones are', () => {
    const bad = analyzeChannels(makeLog([simulateChannel({ seed: 3, duration_s: 200, rate_hz: 10, ar: 0.3 })]), settings);
    const f = bad.findings.find((x) => x.kind === 'not-white');
    expect(f).toBeDefined();
    expect(f?.p ?? 1).toBeLessThan(0.01);
    const w = bad.block?.[0].whiteness as { lags: number; rho: number[]; rhoBound: number[] };
    expect(w.lags).toBe(20);
    // rho(1) of an AR(1) with a = 0.3 is about 0.3 (common practice), far beyond 1.96/sqrt(2000) ~ 0.044.
    expect(Math.abs(w.rho[0] - 0.3)).toBeLessThan(0.08);
    expect(w.rho[0]).toBeGreaterThan(w.rhoBound[0]);
    const good = analyzeChannels(makeLog([simulateChannel({ seed: 3, duration_s: 200, rate_hz: 10 })]), settings);
    expect(good.findings.some((x) => x.kind === 'not-white')).toBe(false);
    expect((good.block?.[0].whiteness?.ljungBoxP ?? 0)).toBeGreaterThan(0.01);
  });

  it('3 dof: an AR(1) innovation is flagged with the per-component correction', () => {
    const bad = analyzeChannels(makeLog([simulateChannel({ seed: 4, duration_s: 200, rate_hz: 10, dof: 3, ar: 0.3 })]), settings);
    expect(bad.findings.some((x) => x.kind === 'not-white')).toBe(true);
    const w = bad.block?.[0].whiteness as unknown as { components: unknown[] };
    expect(w.components.length).toBe(3);
  });

  it('a measurement bias of 0.3 sigma on one component is an innovation-bias finding on that axis', () => {
    const out = analyzeChannels(makeLog([simulateChannel({ seed: 9, duration_s: 100, rate_hz: 10, dof: 2, bias: [0, 0.3] })]), settings);
    const f = out.findings.filter((x) => x.kind === 'innovation-bias');
    expect(f.length).toBe(1);
    expect(f[0].axis).toBe(1);
    expect(f[0].size ?? 0).toBeGreaterThan(0.15);
    const mean = out.block?.[0].innovationMean ?? [];
    expect(mean.length).toBe(2);
    expect(Math.abs(mean[0] ?? 1)).toBeLessThan(0.1);
  });
});

describe('angle components and Monte Carlo helpers', () => {
  it('an angle innovation near +-pi is wrapped in the NIS and in the innovation series', () => {
    // Constructed: heading innovations that cross pi; wrapped they are +-0.1 rad with S = 0.01 (NIS 1 each).
    const ch = makeChannel({
      name: 'yaw', t_s: [0, 1, 2], nu: [2 * Math.PI - 0.1, -2 * Math.PI + 0.1, 0.1], S: [0.01, 0.01, 0.01],
      angleComponents: [true],
    });
    const out = analyzeChannels(makeLog([ch]), settings);
    expect(Array.from(out.nisByChannel.get('yaw') ?? []).map((v) => Math.round(v * 1e9) / 1e9)).toEqual([1, 1, 1]);
    const inn = out.series.find((s) => s.key === 'innovation/yaw/0');
    expect(inn?.unit).toBe('rad');
    expect(inn?.y[0]).toBeCloseTo(-0.1, 12);
    expect(inn?.y[1]).toBeCloseTo(0.1, 12);
  });

  it('N-run average bounds are chi2(N n)/N and the inside share counts steps', () => {
    // Source: reference-checks.md sec 2.2, average NIS n_z 1, N 50: [0.6471, 1.4284], tol 1e-4.
    const [lo, hi] = monteCarloNisBounds(0.95, 1, 50);
    expect(Math.abs(lo - 0.6471)).toBeLessThanOrEqual(1e-4);
    expect(Math.abs(hi - 1.4284)).toBeLessThanOrEqual(1e-4);
    const avg = averageAcrossRuns([Float64Array.of(1, 2, NaN, 0.2), Float64Array.of(1, 2, 1)]);
    expect(Array.from(avg)).toEqual([1, 2, NaN]);
    expect(monteCarloInsideShare(avg, [0.6, 1.5])).toBeCloseTo(0.5, 15);
  });
});

describe('distribution figures', () => {
  it('histogram against chi-square and KS on a consistent run; KS rejects NIS scaled by 1.5', () => {
    const ok = analyzeChannels(makeLog([simulateChannel({ seed: 21, duration_s: 300, rate_hz: 10 })]), settings);
    const nis = ok.block?.[0].nis as { histogram: { counts: number[]; pdf: number[]; density: number[]; overflow: number; n: number }; ks: { p: number; d: number } };
    expect(nis.histogram.counts.reduce((a, b) => a + b, 0) + nis.histogram.overflow).toBe(nis.histogram.n);
    expect(nis.ks.p).toBeGreaterThan(0.01);
    const scaled = simulateChannel({ seed: 21, duration_s: 300, rate_hz: 10, scaleS: { from_s: 0, to_s: 1e9, factor: 1 / 1.5 } });
    const bad = analyzeChannels(makeLog([scaled]), settings);
    expect((bad.block?.[0].nis as { ks: { p: number } }).ks.p).toBeLessThan(1e-4);
    expect(ok.series.map((s) => s.key)).toEqual(expect.arrayContaining(['nisHistogram/sim', 'nisPdf/sim', 'acf/sim']));
  });
});

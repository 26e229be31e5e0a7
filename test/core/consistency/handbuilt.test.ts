import { describe, expect, it } from 'vitest';
import { analyzeChannels } from '../../../extension/core/consistency/index';
import { windowTest, slidingAverage } from '../../../extension/core/consistency/window';
import { TopK } from '../../../extension/core/consistency/topK';
import { resolveSettings } from '../../../extension/core/settings';
import { finiteJson } from '../../../extension/core/finite';
import { REPORT_SCHEMA } from '../../../extension/core/report';
import { reportProblems } from '../../helpers/reportSchema';
import { jStat } from '../stats/references';
import { makeChannel, makeLog } from './makeLog';
import { eigs } from 'mathjs';
import { makeRng, randomSpd } from './rng';

// Constructed channels with S = identity, so each NIS is |nu|^2 by hand.
function handLog() {
  const a = makeChannel({
    name: 'A', t_s: [0, 1, 2, 3, 4, 5], nu: [1, 5, 0.5, 10, 4, NaN], S: [1, 1, 1, 1, 1, 1],
    ids: ['a', 'b', 'a', 'b', 'a', 'b'], rejected: [0, 0, 0, 1, 0, 0],
  });
  const b = makeChannel({
    name: 'B', dof: 2, t_s: [0.5, 1.5, 2.5], nu: [5, 0, 1, 1, 4, 3], S: [1, 0, 0, 1, 1, 0, 0, 1, 1, 0, 0, 1],
    line: [10, 11, 12],
  });
  return makeLog([a, b]);
}

describe('hand-built channels: worst ordering and rejection handling', () => {
  const settings = resolveSettings({ maxWorst: 4 });
  const out = analyzeChannels(handLog(), settings);

  it('worst: smallest chi-square tail first, rejected update (NIS 100) left out, at most maxWorst', () => {
    // Source for p: jStat 1.9.6 chisquare.cdf (upper tail 1 - cdf; these tails are far above round-off).
    const p = (x: number, k: number): number => 1 - jStat.chisquare.cdf(x, k);
    expect(out.worst.map((w) => [w.channel, w.t, w.score])).toEqual([
      ['A', 1, 25], // p 5.7e-7
      ['B', 0.5, 25], // p 3.7e-6, tie with t 2.5 broken by time
      ['B', 2.5, 25],
      ['A', 4, 16], // p 6.3e-5
    ]);
    expect(out.worst[0].p).toBeCloseTo(p(25, 1), 12);
    expect(out.worst[1].p).toBeCloseTo(p(25, 2), 12);
    expect(out.worst[3].p).toBeCloseTo(p(16, 1), 10);
    expect(out.worst[0].line).toBe(3);
    expect(out.worst[1].line).toBe(10);
    expect(out.worst[0].id).toBe('b');
    expect(out.worst.some((w) => w.score === 100)).toBe(false);
  });

  it('channel and per-id counts', () => {
    const a = out.block?.[0];
    expect(a?.updates).toBe(6);
    expect(a?.rejected).toBe(1);
    expect(a?.outliers).toBe(2); // 25 and 16 beyond chi2 0.999 (1 dof) = 10.83
    expect(a?.nis.mean).toBeCloseTo((1 + 25 + 0.25 + 16) / 4, 14);
    expect(a?.nis.count).toBe(4);
    expect(a?.nis.missing).toBe(1);
    // Inside the 95% interval [0.000982, 5.024] for 1 dof: 1 and 0.25.
    expect(a?.nis.inside95).toBeCloseTo(0.5, 14);
    expect(a?.byId).toEqual([
      { id: 'a', updates: 3, outliers: 1, nis: { mean: (1 + 0.25 + 16) / 3, inside95: 2 / 3 }, innovationMean: [(1 + 0.5 + 4) / 3] },
      { id: 'b', updates: 3, rejected: 1, outliers: 1, nis: { mean: 25, inside95: 0 }, innovationMean: [5] },
    ]);
    const b = out.block?.[1];
    expect(b?.outliers).toBe(2); // 25, 25 beyond 13.8155 (2 dof)
    expect(b?.innovationMean?.[0]).toBeCloseTo(10 / 3, 14);
  });

  it('outlier findings name time, line, channel, id, score and p, with the contract wording', () => {
    const outs = out.findings.filter((f) => f.kind === 'outlier' && f.channel === 'A');
    expect(outs.map((f) => [f.t, f.line, f.id, f.score])).toEqual([[1, 3, 'b', 25], [4, 6, 'a', 16]]);
    expect(outs[0].message).toBe('NIS 25 is beyond the 99.9% gate (10.8) for 1 dof');
    expect(outs[0].p).toBeCloseTo(1 - jStat.chisquare.cdf(25, 1), 12);
  });

  it('gives the NIS of every update in nisByChannel (rejected included)', () => {
    const a = out.nisByChannel.get('A');
    expect(Array.from(a ?? []).slice(0, 5)).toEqual([1, 25, 0.25, 100, 16]);
    expect(a?.[5]).toBeNaN();
  });

  it('makes a report that satisfies the JSON Schema and is finite', () => {
    const report = {
      schema: REPORT_SCHEMA,
      tool: { version: '0.1.0' },
      source: { path: 'test.csv', format: 'csv', rows: 9, files: ['test.csv'] },
      settings: { confidence: 0.95, gate: 0.999, window_s: 5, imuPreset: 'consumer' },
      partial: false,
      time: { epochs: 0 },
      channels: out.block,
      notes: [],
      findings: out.findings,
      worst: out.worst,
    };
    const json = JSON.parse(JSON.stringify(finiteJson(report)));
    expect(reportProblems(json)).toEqual([]);
    // The channel block is already finite without the final clean-up.
    expect(JSON.stringify(out.block)).not.toMatch(/NaN|Infinity/);
  });
});

describe('bad covariances', () => {
  it('an indefinite and an asymmetric S are one bad-covariance run; the NIS of the indefinite one is missing', () => {
    const I = [1, 0, 0, 1];
    const ch = makeChannel({
      name: 'C', dof: 2, t_s: [0, 1, 2, 3, 4], nu: [1, 0, 1, 0, 1, 0, 1, 0, 1, 0],
      S: [...I, ...I, 1, 2, 2, 1, 1, 0.5, 0, 1, ...I],
    });
    const out = analyzeChannels(makeLog([ch]), resolveSettings());
    const bad = out.findings.filter((f) => f.kind === 'bad-covariance');
    expect(bad.length).toBe(1);
    expect(bad[0].t).toBe(2);
    expect(bad[0].tEnd).toBe(3);
    expect(bad[0].message).toMatch(/not symmetric positive definite at 2 updates/);
    const cov = out.block?.[0].covariance as { checked: number; notSpd: number; asymmetric: number; minEigenvalue: number };
    expect(cov).toMatchObject({ checked: 5, notSpd: 1, asymmetric: 1 });
    // Eigenvalues of the sampled well-formed S (identity) are 1.
    expect(cov.minEigenvalue).toBeCloseTo(1, 12);
    expect(out.nisByChannel.get('C')?.[2]).toBeNaN();
    expect(out.block?.[0].nis.missing).toBe(1);
  });

  it('1 dof: S <= 0 is not positive definite', () => {
    const ch = makeChannel({ name: 'D', t_s: [0, 1, 2], nu: [1, 1, 1], S: [1, -1, 1] });
    const out = analyzeChannels(makeLog([ch]), resolveSettings());
    expect(out.findings.filter((f) => f.kind === 'bad-covariance').map((f) => f.line)).toEqual([3]);
  });

  it('eigen-figures of a sampled 3x3 S: smallest eigenvalue and condition number', () => {
    // Constructed: diag(4, 2, 0.5) has smallest eigenvalue 0.5 and condition number 8.
    const ch = makeChannel({ name: 'E', dof: 3, t_s: [0], nu: [0, 0, 0], S: [4, 0, 0, 0, 2, 0, 0, 0, 0.5] });
    const cov = analyzeChannels(makeLog([ch]), resolveSettings()).block?.[0].covariance as { minEigenvalue: number; maxCondition: number };
    expect(cov.minEigenvalue).toBeCloseTo(0.5, 10);
    expect(cov.maxCondition).toBeCloseTo(8, 10);
  });
});

describe('eigen-figures against mathjs eigs', () => {
  it('smallest eigenvalue and condition number of one random SPD S', () => {
    const S = randomSpd(makeRng(314), 4);
    const ch = makeChannel({ name: 'F', dof: 4, t_s: [0], nu: [0.1, 0.2, 0.3, 0.4], S });
    const cov = analyzeChannels(makeLog([ch]), resolveSettings()).block?.[0].covariance as { minEigenvalue: number; maxCondition: number };
    const rows = [0, 1, 2, 3].map((r) => Array.from(S.subarray(r * 4, r * 4 + 4)));
    // Source: mathjs 15 eigs (general-purpose reference library).
    const values = (eigs(rows).values as unknown as number[]).slice().sort((a, b) => a - b);
    expect(cov.minEigenvalue).toBeCloseTo(values[0], 10);
    expect(cov.maxCondition / (values[3] / values[0])).toBeCloseTo(1, 10);
  });
});

describe('edge cases never throw and stay finite', () => {
  it('logged NIS only, empty channel, all rejected, dof 0', () => {
    const logged = makeChannel({ name: 'L', t_s: [0, 1, 2, 3], nu: [NaN, NaN, NaN, NaN], nisLogged: [0.5, 2, 30, NaN] });
    const empty = makeChannel({ name: 'Z', t_s: [], nu: [] });
    const rejected = makeChannel({ name: 'R', t_s: [0, 1], nu: [1, 2], S: [1, 1], rejected: [1, 1] });
    const zeroDof = { ...makeChannel({ name: 'Q', t_s: [0], nu: [] }), dof: 0 };
    const out = analyzeChannels(makeLog([logged, empty, rejected, zeroDof]), resolveSettings());
    expect(out.block?.map((c) => c.name)).toEqual(['L', 'Z', 'R', 'Q']);
    const l = out.block?.[0];
    expect(l?.nis.mean).toBeCloseTo(32.5 / 3, 14);
    expect(l?.outliers).toBe(1);
    expect(l?.innovationMean).toBeUndefined();
    expect(out.block?.[2].rejected).toBe(2);
    expect(out.block?.[2].nis.mean).toBeUndefined();
    expect(out.worst.every((w) => w.channel === 'L')).toBe(true);
    expect(JSON.stringify(out.block)).not.toMatch(/NaN|Infinity|null,"?[a-z]/);
  });

  it('a long gap in time makes no empty windows and no work per empty window', () => {
    const t = [0, 1, 2, 3, 1e9, 1e9 + 1, 1e9 + 2];
    const nis = Float64Array.from(t, () => 1);
    const r = windowTest(Float64Array.from(t), nis, t.length, 1, { kind: 'seconds', size: 5 }, 0.01);
    // Windows of 5 s every 2.5 s: [0, 5) and [2.5, 7.5) before the gap ([2.5, 7.5) holds t = 3); after it the
    // first window holding t = 1e9 starts at 1e9 - 2.5 and already reaches the last update, so it is the last one.
    expect(r.tests).toBe(3);
    expect(r.runs).toEqual([]);
  });
});

describe('hostile time stamps end the window scan', () => {
  it('NaN and infinite times, and a window far below the time resolution', () => {
    const v = Float64Array.from([1, 1, 1, 1, 1]);
    const r1 = windowTest(Float64Array.from([NaN, 0, 1, NaN, 2]), v, 5, 1, { kind: 'seconds', size: 5 }, 0.01);
    expect(r1.tests).toBe(1);
    const r2 = windowTest(Float64Array.from([0, 1, Infinity, 3, 4]), v, 5, 1, { kind: 'seconds', size: 1 }, 0.01);
    expect(r2.tests).toBeGreaterThanOrEqual(1);
    const abs = Float64Array.from([1.7e9, 1.7e9 + 1, 1.7e9 + 2, 1.7e9 + 3, 1.7e9 + 4]);
    const r3 = windowTest(abs, v, 5, 1, { kind: 'seconds', size: 1e-9 }, 0.01);
    expect(r3.tests).toBeLessThanOrEqual(4 * 5 + 16);
    const s = slidingAverage(Float64Array.from([NaN, NaN]), Float64Array.from([1, 2]), 2, 1, { kind: 'seconds', size: 1 }, 0.95);
    expect(s.full).toBe(0);
    expect(windowTest(Float64Array.from([NaN, NaN]), Float64Array.from([1, 2]), 2, 1, { kind: 'seconds', size: 1 }, 0.01).tests).toBe(0);
  });
});

describe('window arithmetic (constructed)', () => {
  it('sliding averages by hand and half-overlapping tested windows', () => {
    const t = Float64Array.from([0, 1, 2, 3, 4, 5]);
    const v = Float64Array.from([1, 2, 3, 4, 5, 6]);
    const s = slidingAverage(t, v, 6, 1, { kind: 'updates', size: 3 }, 0.95);
    expect(Array.from(s.mean)).toEqual([1, 1.5, 2, 3, 4, 5]);
    expect(Array.from(s.count)).toEqual([1, 2, 3, 3, 3, 3]);
    expect(s.full).toBe(4);
    const secs = slidingAverage(t, v, 6, 1, { kind: 'seconds', size: 2 }, 0.95);
    // Window (t - 2, t]: two updates once t >= 1.
    expect(Array.from(secs.mean)).toEqual([1, 1.5, 2.5, 3.5, 4.5, 5.5]);
    const wt = windowTest(t, v, 6, 1, { kind: 'updates', size: 4 }, 0.01);
    // Windows of 4 every 2: [0, 4), [2, 6).
    expect(wt.tests).toBe(2);
    expect(wt.alphaPerTest).toBeCloseTo(0.005, 15);
  });

  it('TopK keeps the k largest, ties by first push, NaN ignored', () => {
    const k = new TopK(3);
    [5, 1, NaN, 7, 5, 9, 2].forEach((v, i) => k.push(v, i));
    expect(k.result()).toEqual({ keys: [9, 7, 5], items: [5, 3, 0] });
    const many = new TopK(10);
    for (let i = 0; i < 10000; i++) many.push((i * 7919) % 10007, i);
    const r = many.result();
    const sorted = Array.from({ length: 10000 }, (_, i) => (i * 7919) % 10007).sort((a, b) => b - a).slice(0, 10);
    expect(r.keys).toEqual(sorted);
  });
});

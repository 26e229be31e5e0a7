import { describe, expect, it } from 'vitest';
import { createRequire } from 'node:module';
import { analyzeUwb, summarizeValues, isTdoaChannel, parsePairId } from '../../../extension/core/uwb/index';
import { resolveSettings, DEFAULT_SETTINGS } from '../../../extension/core/settings';
import { toaOffsetDop } from '../../../extension/core/uwb/dop';
import { finiteJson } from '../../../extension/core/finite';
import { REPORT_SCHEMA } from '../../../extension/core/report';
import { reportProblems } from '../../helpers/reportSchema';
import { GREENHOUSE_ANCHORS, simulateUwb, tagAt } from './simulate';
import type { Vec3_m } from '../../../extension/core/uwb/vec3';

/** jStat 1.9 (devDependency, general-purpose reference; ships no types: only the functions used are typed here). */
interface JStatStats {
  mean(a: number[]): number;
  stdev(a: number[], sample: boolean): number;
  median(a: number[]): number;
  meddev(a: number[]): number;
}
const jStat = (createRequire(import.meta.url)('jstat') as { jStat: JStatStats }).jStat;

// All logs here come from our own seeded simulation (simulate.ts, invented greenhouse scene).
const BLOCK_3 = { anchor: 3, t0: 30, t1: 60, bias_m: 0.4, share: 0.15, extra_m: [1, 3] as [number, number] };
const suspects = (log: Parameters<typeof analyzeUwb>[0], settings = DEFAULT_SETTINGS): string[] =>
  analyzeUwb(log, settings).block!.anchors.filter((a) => a.suspect).map((a) => a.id);

describe('blame: one anchor blocked part of the time (seeded simulation)', () => {
  it('TDOA updates: anchor 3 and only anchor 3 is suspect, with a suspect-anchor finding naming it', () => {
    const out = analyzeUwb(simulateUwb({ blocked: BLOCK_3 }), DEFAULT_SETTINGS);
    expect(out.block!.anchors.filter((a) => a.suspect).map((a) => a.id)).toEqual(['3']);
    const f = out.findings.filter((x) => x.kind === 'suspect-anchor');
    expect(f.map((x) => x.id)).toEqual(['3']);
    expect(f[0].message).toContain('Anchor 3');
    expect(f[0].channel).toBe('tdoa');
    // Every pair through anchor 3 has the excess, no other pair does.
    const bad = out.block!.pairs.filter((p) => p.excessAnomalies).map((p) => p.id).sort();
    expect(bad).toEqual(['1-3', '2-3', '3-0', '3-4']);
    expect(out.block!.evidence).toBe('updates');
  });
  it('raw TDOA records with ground truth only (no filter updates): still anchor 3 only', () => {
    const out = analyzeUwb(simulateUwb({ blocked: BLOCK_3, withUpdates: false }), DEFAULT_SETTINGS);
    expect(out.block!.evidence).toBe('residuals-vs-truth');
    expect(out.block!.anchors.filter((a) => a.suspect).map((a) => a.id)).toEqual(['3']);
  });
  it('two-way ranges: anchor 3 only', () => {
    expect(suspects(simulateUwb({ kind: 'range', blocked: BLOCK_3 }))).toEqual(['3']);
  });
  it('other seeds and other blocked anchors: exactly the blocked one', () => {
    for (const seed of [2, 3, 4]) {
      for (const kind of ['tdoa', 'range'] as const) {
        expect(suspects(simulateUwb({ seed, kind, blocked: { ...BLOCK_3, anchor: seed + 3 } }))).toEqual([String(seed + 3)]);
      }
    }
  });
  it('a clean log has no suspect anchor and no suspect-anchor finding', () => {
    for (const seed of [1, 2, 3]) {
      const out = analyzeUwb(simulateUwb({ seed }), DEFAULT_SETTINGS);
      expect(out.block!.anchors.every((a) => !a.suspect)).toBe(true);
      expect(out.findings.filter((f) => f.kind === 'suspect-anchor')).toEqual([]);
    }
  });
});

describe('per-anchor offsets from residuals against ground truth', () => {
  it('TDOA: a +0.3 m clock offset of anchor 6 is recovered (relative to the median anchor) and only 6 is suspect', () => {
    const b = analyzeUwb(simulateUwb({ offsets: { 6: 0.3 } }), DEFAULT_SETTINGS).block!;
    const a6 = b.anchors.find((a) => a.id === '6')!;
    expect(a6.offset!.source).toBe('truth');
    expect(a6.offset!.relative).toBe(true);
    expect(Math.abs(a6.offset!.value - 0.3)).toBeLessThan(4 * a6.offset!.sigma + 1e-3);
    expect(b.anchors.filter((a) => a.suspect).map((a) => a.id)).toEqual(['6']);
    // The constant offset shows on every pair through 6 with the pair's sign (d_j - d_i).
    for (const p of b.pairs.filter((q) => q.i === '6' || q.j === '6')) {
      const expected = p.j === '6' ? 0.3 : -0.3;
      expect(Math.abs(p.residualMean! - expected)).toBeLessThan(0.03);
    }
  });
  it('ranges: the offset is absolute', () => {
    const b = analyzeUwb(simulateUwb({ kind: 'range', offsets: { 2: -0.25 } }), DEFAULT_SETTINGS).block!;
    const a2 = b.anchors.find((a) => a.id === '2')!;
    expect(a2.offset!.relative).toBe(false);
    expect(Math.abs(a2.offset!.value + 0.25)).toBeLessThan(4 * a2.offset!.sigma + 1e-3);
    expect(Math.abs(a2.residualMean! + 0.25)).toBeLessThan(0.03);
    expect(b.anchors.filter((a) => a.suspect).map((a) => a.id)).toEqual(['2']);
  });
  it('a survey error of the logged position of anchor 5 makes it (only it) suspect', () => {
    const logged = GREENHOUSE_ANCHORS.map((p, a) => (a === 5 ? ([p[0] + 0.6, p[1], p[2]] as Vec3_m) : p));
    expect(suspects(simulateUwb({ loggedAnchors: logged, withUpdates: false }))).toEqual(['5']);
  });
});

describe('per-pair and per-anchor statistics', () => {
  const log = simulateUwb({ seed: 5 });
  const b = analyzeUwb(log, DEFAULT_SETTINGS).block!;
  const ch = log.channels[0];
  it('pair innovation mean, sample SD, median and MAD agree with jStat', () => {
    const k01 = ch.ids.indexOf('0-1');
    const nu: number[] = [];
    for (let k = 0; k < ch.length; k++) if (ch.id[k] === k01 && !ch.rejected[k]) nu.push(ch.nu[k]);
    const p = b.pairs.find((x) => x.id === '0-1')!;
    expect(p.updates).toBe(nu.length + p.rejected);
    expect(Math.abs(p.innovationMean! - jStat.mean(nu))).toBeLessThan(1e-12);
    expect(Math.abs(p.innovationStd! - jStat.stdev(nu, true))).toBeLessThan(1e-12);
    expect(Math.abs(p.median! - jStat.median(nu))).toBeLessThan(1e-12);
    expect(Math.abs(p.mad! - jStat.meddev(nu))).toBeLessThan(1e-12);
    // NIS = nu^2 / S for 1 dof (Bar-Shalom et al. 2001 sec 5.4 definition).
    let s = 0;
    let n = 0;
    for (let k = 0; k < ch.length; k++) if (ch.id[k] === k01 && !ch.rejected[k]) { s += (ch.nu[k] * ch.nu[k]) / ch.S![k]; n++; }
    expect(Math.abs(p.nis.mean! - s / n)).toBeLessThan(1e-12);
  });
  it('an anchor counts the updates of all its pairs; its innovations are oriented', () => {
    const a0 = b.anchors.find((x) => x.id === '0')!;
    const pairs = b.pairs.filter((p) => p.i === '0' || p.j === '0');
    expect(a0.updates).toBe(pairs.reduce((s, p) => s + p.updates, 0));
    expect(a0.outliers).toBe(pairs.reduce((s, p) => s + p.outliers, 0));
  });
  it('NIS from the consistency stage is used when given', () => {
    const zero = new Map([['tdoa', new Float64Array(ch.length)]]);
    const withZero = analyzeUwb(log, DEFAULT_SETTINGS, zero).block!;
    expect(withZero.anchors.every((a) => a.nis.mean === 0 && a.outliers === 0)).toBe(true);
  });
  it('summarizeValues: sample SD and mean against jStat on a small set', () => {
    const v = [1.2, 0.7, -0.4, 2.5, 0.9, 1.1];
    const s = summarizeValues(v);
    expect(Math.abs(s.mean! - jStat.mean(v))).toBeLessThan(1e-15);
    expect(Math.abs(s.std! - jStat.stdev(v, true))).toBeLessThan(1e-15);
    expect(Math.abs(s.mad! - jStat.meddev(v))).toBeLessThan(1e-15);
  });
});

describe('geometry', () => {
  it('too-few-anchors where only anchors 0, 1, 2 are heard (80 to 85 s)', () => {
    const out = analyzeUwb(simulateUwb({ onlyAnchors: { anchors: [0, 1, 2], t0: 80, t1: 85 } }), DEFAULT_SETTINGS);
    const f = out.findings.filter((x) => x.kind === 'too-few-anchors');
    expect(f.length).toBe(1);
    expect(f[0].t!).toBeGreaterThanOrEqual(79.9);
    expect(f[0].tEnd!).toBeLessThanOrEqual(85.1);
    expect(out.block!.dop.tooFewAnchors).toBe(5);
    expect(out.block!.dop.undefined).toBe(5);
  });
  it('a 5 s silence of every anchor is one too-few-anchors finding over the gap, and the DOP series breaks there', () => {
    const log = simulateUwb({ seed: 6, duration_s: 60 });
    const t = log.channels[0].t_s; // shared with the raw TDOA stream
    for (let k = 0; k < log.channels[0].length; k++) if (t[k] >= 40 && t[k] < 45) t[k] = NaN;
    const out = analyzeUwb(log, DEFAULT_SETTINGS);
    const f = out.findings.filter((x) => x.kind === 'too-few-anchors');
    expect(f.length).toBe(1);
    expect(f[0].t!).toBeGreaterThanOrEqual(39.9);
    expect(f[0].t!).toBeLessThanOrEqual(40.1);
    expect(f[0].tEnd!).toBeGreaterThanOrEqual(44.9);
    expect(f[0].tEnd!).toBeLessThanOrEqual(45.1);
    expect(out.block!.dop.tooFewAnchors).toBe(5);
    const dop = out.series.find((s) => s.key === 'uwb/dop')!;
    const inGap = Array.from(dop.x).findIndex((x) => x > 40 && x < 45);
    expect(Number.isNaN(dop.y[inGap])).toBe(true);
  });
  it('the DOP series equals the TOA-with-offset PDOP of the heard anchors at the estimate', () => {
    const log = simulateUwb({ seed: 9 });
    const out = analyzeUwb(log, DEFAULT_SETTINGS);
    const dop = out.series.find((s) => s.key === 'uwb/dop')!;
    // Window 10: every anchor is heard (14 pairs cycle in 0.35 s); the estimate at the window centre by the same
    // linear interpolation of the 20 Hz state.
    const tc = dop.x[10];
    const st = log.state;
    const k = Math.floor(tc * 20);
    const w = tc * 20 - k;
    const at = (c: string): number => st.columns.get(c)![k] * (1 - w) + st.columns.get(c)![k + 1] * w;
    const p: Vec3_m = [at('p_x'), at('p_y'), at('p_z')];
    expect(Math.abs(dop.y[10] - toaOffsetDop(GREENHOUSE_ANCHORS, p)!.pdop)).toBeLessThan(1e-9);
    expect(out.block!.dop.median!).toBeGreaterThan(1);
    expect(out.block!.dop.max!).toBeGreaterThanOrEqual(out.block!.dop.median!);
  });
  it('high-dop follows settings.maxDop', () => {
    const log = simulateUwb({ seed: 9 });
    const low = analyzeUwb(log, resolveSettings({ maxDop: 2 }));
    const high = analyzeUwb(log, resolveSettings({ maxDop: 100 }));
    expect(low.findings.some((f) => f.kind === 'high-dop' && (f.score ?? 0) > 2)).toBe(true);
    expect(low.block!.dop.aboveThreshold).toBeGreaterThan(0);
    expect(high.findings.filter((f) => f.kind === 'high-dop')).toEqual([]);
  });
  it('anchors coplanar with the tag: singular geometry is counted as undefined and raises high-dop', () => {
    const flat = GREENHOUSE_ANCHORS.map((p) => [p[0], p[1], 1.2] as Vec3_m);
    // Without an estimate the geometry is taken at the true position, exactly in the anchors' plane.
    const exact = analyzeUwb(simulateUwb({ anchors: flat, tagHeight_m: 1.2, duration_s: 20, withEstimate: false }), DEFAULT_SETTINGS);
    expect(exact.block!.dop.position).toBe('truth');
    expect(exact.block!.dop.median).toBeUndefined();
    expect(exact.block!.dop.undefined).toBe(exact.block!.dop.windows);
    expect(exact.findings.some((f) => f.kind === 'high-dop' && f.message.includes('singular'))).toBe(true);
    // At the estimate (5 cm vertical noise) the geometry is barely defined: PDOP far above the threshold.
    const near = analyzeUwb(simulateUwb({ anchors: flat, tagHeight_m: 1.2, duration_s: 20 }), DEFAULT_SETTINGS);
    expect(near.block!.dop.median!).toBeGreaterThan(50);
    expect(near.findings.some((f) => f.kind === 'high-dop')).toBe(true);
  });
});

describe('measurement-only fixes', () => {
  it('a static tag with noise-free TDOA is fixed to 1e-6 m; the error against the estimate is the estimate error', () => {
    const tag: Vec3_m = [7, 5, 1.3];
    const m = analyzeUwb(simulateUwb({ staticTag: tag, sigma_m: 0, duration_s: 10 }), DEFAULT_SETTINGS).block!.multilateration;
    expect(m.fixes).toBeGreaterThan(20);
    expect(m.rmseVsTruth!).toBeLessThan(1e-6);
    // Estimate = truth + N(0, 0.05^2) per axis, linearly interpolated: RMS a little under 0.05 sqrt(3).
    expect(m.rmseVsEstimate!).toBeGreaterThan(0.03);
    expect(m.rmseVsEstimate!).toBeLessThan(0.1);
  });
  it('one gross error in an epoch is dropped and the epoch solved again (static tag, a third of the pair 0-1 records read 3 m long)', () => {
    const tag: Vec3_m = [7, 5, 1.3];
    const log = simulateUwb({ staticTag: tag, sigma_m: 0.01, duration_s: 20 });
    const raw = log.tdoa!;
    const ch = log.channels[0];
    const k01 = ch.ids.indexOf('0-1');
    raw.d_m = raw.d_m.slice();
    for (let k = 0; k < raw.length; k++) if (ch.id[k] === k01 && k % 3 === 0) raw.d_m[k] += 3;
    const out = analyzeUwb(log, DEFAULT_SETTINGS);
    const m = out.block!.multilateration;
    expect(m.refitted).toBeGreaterThan(10);
    expect(m.medianErrorVsTruth!).toBeLessThan(0.05);
    // An epoch with exactly 4 anchors has no redundancy: a gross error there cannot be seen, so a few fixes may
    // stay wrong; 95% of them are good.
    const e = Array.from(out.series.find((s) => s.key === 'uwb/fix/errorVsTruth')!.y).sort((a, b) => a - b);
    expect(e[Math.floor(0.95 * e.length)]).toBeLessThan(0.1);
  });
  it('noisy fixes stay near the truth horizontally and give the trajectory series', () => {
    const out = analyzeUwb(simulateUwb({ seed: 4, kind: 'range' }), DEFAULT_SETTINGS);
    const m = out.block!.multilateration;
    expect(m.fixes / m.epochs).toBeGreaterThan(0.9);
    expect(m.rmse2dVsTruth!).toBeLessThan(0.3);
    for (const key of ['uwb/fix/x', 'uwb/fix/y', 'uwb/fix/z', 'uwb/anchors']) expect(out.series.some((s) => s.key === key)).toBe(true);
    const fx = out.series.find((s) => s.key === 'uwb/fix/x')!;
    const t = fx.x[5];
    expect(Math.abs(fx.y[5] - tagAt(t, {})[0])).toBeLessThan(1);
    const anchorsSeries = out.series.find((s) => s.key === 'uwb/anchors')!;
    expect(Array.from(anchorsSeries.x)).toEqual(GREENHOUSE_ANCHORS.map((p) => p[0]));
  });
});

describe('inputs and report', () => {
  it('no UWB data: no block', () => {
    const log = simulateUwb({ withUpdates: false, withRaw: false });
    const out = analyzeUwb(log, DEFAULT_SETTINGS);
    expect(out.block).toBeUndefined();
    expect(out.findings).toEqual([]);
  });
  it('channel rule: ids i-j make a TDOA channel', () => {
    expect(parsePairId('4-5')).toEqual(['4', '5']);
    expect(parsePairId('a12 - b3')).toEqual(['a12', 'b3']);
    expect(parsePairId('4-4')).toBeUndefined();
    expect(parsePairId('gps12')).toBeUndefined();
    const log = simulateUwb({});
    expect(isTdoaChannel(log.channels[0])).toBe(true);
    expect(isTdoaChannel({ ...log.channels[0], ids: log.channels[0].ids.map((x, k) => (k === 0 ? 'sat7' : x)) })).toBe(false);
  });
  it('anchors from metadata count; a heard anchor without position gives a note', () => {
    const log = simulateUwb({ duration_s: 20 });
    const meta: Record<string, string> = {};
    log.anchors.slice(0, 7).forEach((a) => { meta[`anchor ${a.id}`] = a.p.join(' '); });
    const out = analyzeUwb({ ...log, anchors: [], meta }, DEFAULT_SETTINGS);
    expect(out.block!.anchors.filter((a) => a.p).length).toBe(7);
    expect(out.block!.anchorsWithoutPosition).toEqual(['7']);
    expect(out.findings.some((f) => f.kind === 'note' && f.message.includes('anchor 7'))).toBe(true);
  });
  it('the block fits the report schema and holds only finite numbers', () => {
    const out = analyzeUwb(simulateUwb({ blocked: BLOCK_3 }), DEFAULT_SETTINGS);
    const report = finiteJson({
      schema: REPORT_SCHEMA, tool: { version: '0.1.0' }, source: { path: 'greenhouse.csv', format: 'csv', rows: 1, files: [] },
      settings: { confidence: 0.95, gate: 0.999, window_s: 5, imuPreset: 'consumer' }, partial: false, time: { epochs: 0 },
      channels: [], uwb: out.block, notes: [], findings: out.findings, worst: [],
    });
    expect(reportProblems(report)).toEqual([]);
  });
});

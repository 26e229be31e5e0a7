// Pure host modules: settings mapping, finding ranking and stepping, the headline figure, the mapping-file edit,
// the NIS histogram and the series store. Hand-worked expectations unless a source is named.
import { jStat } from '../core/stats/references';
import { describe, expect, it } from 'vitest';
import type { Finding } from '../../extension/core/report';
import type { Series } from '../../extension/core/series';
import { readConfiguration } from '../../extension/host/configuration';
import { nisHistogram } from '../../extension/host/histogram';
import { addColumnToMapping } from '../../extension/host/mappingEdit';
import { headlineInside95, rankFindings, stepIndex } from '../../extension/host/ranking';
import { SeriesStore, toArrayBuffer } from '../../extension/host/seriesStore';

describe('readConfiguration', () => {
  it('maps residuum.* settings onto AnalysisSettings', () => {
    const values: Record<string, unknown> = {
      'nis.confidenceLevel': 0.99,
      'nis.gate': 0.9999,
      'nis.windowSeconds': 2.5,
      'nis.whitenessLags': 10,
      'worst.maxEntries': 20,
      'uwb.maxDop': 4,
      'imu.preset': 'tactical',
      'imu.static': true,
      'reference.timeOffsetSeconds': -0.25,
      'mapping.file': ' maps/run.map.json ',
      'problems.maxEntries': 7,
      'chart.maxPathPoints': 5000,
      'codeLens.enabled': false,
    };
    expect(readConfiguration((k) => values[k])).toEqual({
      analysis: { confidence: 0.99, gate: 0.9999, window_s: 2.5, whitenessLags: 10, maxWorst: 20, maxDop: 4, imuPreset: 'tactical', imuStatic: true, timeOffset_s: -0.25 },
      mapPath: 'maps/run.map.json',
      maxProblems: 7,
      maxPathPoints: 5000,
      codeLens: false,
    });
  });
  it('falls back to defaults for unset, mistyped or out-of-range values', () => {
    const values: Record<string, unknown> = { 'nis.confidenceLevel': 1.5, 'nis.gate': '0.9', 'imu.preset': 'navigation', 'problems.maxEntries': -3, 'mapping.file': '  ' };
    expect(readConfiguration((k) => values[k])).toEqual({ analysis: {}, maxProblems: 50, maxPathPoints: 20000, codeLens: true });
  });
});

describe('ranking', () => {
  const f = (kind: Finding['kind'], p?: number, severity?: Finding['severity'], score?: number): Finding => ({ kind, p, severity, score, message: kind });
  it('puts the smallest p first, then severity, then score, and caps', () => {
    const list = [f('time-gap'), f('outlier', 1e-5), f('outlier', 1e-30), f('bad-value', undefined, 'error'), f('not-white', undefined, 'info'), f('inconsistent', undefined, 'warning', 9)];
    expect(rankFindings(list, 10).map((x) => `${x.kind}:${x.p ?? ''}`)).toEqual(['outlier:1e-30', 'outlier:0.00001', 'bad-value:', 'inconsistent:', 'time-gap:', 'not-white:']);
    expect(rankFindings(list, 2)).toHaveLength(2);
    expect(rankFindings(list, 0)).toEqual([]);
  });
  it('steps through worst entries with wrap-around', () => {
    expect([stepIndex(undefined, 3, 1), stepIndex(undefined, 3, -1), stepIndex(2, 3, 1), stepIndex(0, 3, -1), stepIndex(1, 3, 1), stepIndex(7, 3, 1), stepIndex(0, 0, 1)]).toEqual([0, 2, 0, 2, 2, 0, undefined]);
  });
  it('weights the headline share by updates', () => {
    expect(headlineInside95([{ updates: 100, nis: { inside95: 0.9 } }, { updates: 300, nis: { inside95: 0.95 } }, { updates: 10, nis: {} }])).toBeCloseTo((90 + 285) / 400, 12);
    expect(headlineInside95([{ updates: 0, nis: { inside95: 1 } }])).toBeUndefined();
  });
});

describe('addColumnToMapping', () => {
  it('creates a mapping file when there is none', () => {
    const e = addColumnToMapping(undefined, 'temp_c');
    expect(e.ok && JSON.parse(e.text)).toEqual({ version: 1, columns: { temp_c: 'ignore' } });
  });
  it('adds to existing columns and keeps everything else', () => {
    const e = addColumnToMapping('{"version":1,"frame":"NED","columns":{"ts":{"role":"t","unit":"ms"}}}', 'debug');
    expect(e.ok && e.added && JSON.parse(e.text)).toEqual({ version: 1, frame: 'NED', columns: { ts: { role: 't', unit: 'ms' }, debug: 'ignore' } });
  });
  it('leaves a present column and refuses broken files', () => {
    expect(addColumnToMapping('{"columns":{"a":"t"}}', 'a')).toEqual({ ok: true, text: '{"columns":{"a":"t"}}', added: false });
    expect(addColumnToMapping('{"columns":', 'a').ok).toBe(false);
    expect(addColumnToMapping('[1]', 'a').ok).toBe(false);
    expect(addColumnToMapping('{"columns":[]}', 'a').ok).toBe(false);
  });
});

describe('nisHistogram', () => {
  it('expects counts from the chi-square CDF', () => {
    const values = new Float64Array([0.1, 0.5, 0.5, 1.2, 2.9, 3.1, 100, NaN, -1]);
    const h = nisHistogram('nis/x', values, 2, 4, 0.95);
    // Source: chi-square(2) 95% quantile = 5.991 (NIST/SEMATECH e-Handbook 1.3.6.7.4 table, via jStat here).
    const top = jStat.chisquare.inv(0.95, 2);
    expect(h.edges[4]).toBeCloseTo(top, 6);
    expect(h.total).toBe(7);
    expect(h.overflow).toBe(1);
    // Bin width 5.991 / 4 = 1.498: 0.1, 0.5, 0.5, 1.2 | 2.9 | 3.1 | (none); 100 overflows; NaN and -1 are not counted.
    expect(h.counts).toEqual([4, 1, 1, 0]);
    for (let i = 0; i < 4; i++) {
      const p = jStat.chisquare.cdf(h.edges[i + 1], 2) - jStat.chisquare.cdf(h.edges[i], 2);
      expect(h.expected[i]).toBeCloseTo(7 * p, 6);
    }
  });
});

describe('SeriesStore', () => {
  const n = 5000;
  const x = new Float64Array(n).map((_, i) => i * 0.01);
  const y = new Float64Array(n).map((_, i) => Math.sin(i / 50));
  y[1234] = 99;
  const series: Series[] = [
    { key: 'nis/a', group: 'innovations', label: 'NIS a', unit: '1', x, y, lo: new Float64Array(n), hi: new Float64Array(n).fill(5) },
    { key: 'trajectory/estimate', group: 'trajectory', label: 'est', unit: 'm', x: y, y: x, line: x.map((_, i) => i + 2) },
    { key: 'uwb/fix/x', group: 'trajectory', label: 'fix', unit: 'm', x, y },
    { key: 'nis/a', group: 'dup', label: 'dup', unit: '1', x, y },
  ];
  const store = new SeriesStore(series, 1000);
  it('describes series without their data and drops duplicate keys', () => {
    expect(store.infos().map((i) => [i.key, i.xy, i.band, i.points, i.x0, i.x1])).toEqual([
      ['nis/a', false, true, n, 0, x[n - 1]],
      ['trajectory/estimate', true, false, n, Math.min(...y), 99],
      ['uwb/fix/x', false, false, n, 0, x[n - 1]],
    ]);
  });
  it('answers a window with an envelope that keeps the spike', () => {
    const r = store.answer({ type: 'series/request', id: 9, key: 'nis/a', t0: 10, t1: 20, widthPx: 50 });
    const ry = new Float64Array(r.y);
    expect(r.id).toBe(9);
    expect(r.inWindow).toBe(1001);
    expect(ry.length).toBeLessThanOrEqual(102);
    expect(Math.max(...ry)).toBe(99);
    expect(new Float64Array(r.hi ?? new ArrayBuffer(0)).every((v) => v === 5)).toBe(true);
  });
  it('leaves the line column out when asked, and answers again from the same pyramid', () => {
    const withLine = store.answer({ type: 'series/request', id: 10, key: 'trajectory/estimate', widthPx: 10 });
    const without = store.answer({ type: 'series/request', id: 11, key: 'trajectory/estimate', widthPx: 10, line: false });
    expect([withLine.line !== undefined, without.line]).toEqual([true, undefined]);
    expect(new Float64Array(without.y)).toEqual(new Float64Array(withLine.y));
    const a = store.answer({ type: 'series/request', id: 12, key: 'nis/a', t0: 10, t1: 20, widthPx: 50 });
    const b = store.answer({ type: 'series/request', id: 13, key: 'nis/a', t0: 10, t1: 20, widthPx: 50 });
    expect(new Float64Array(b.y)).toEqual(new Float64Array(a.y));
  });
  it('thins planar paths and reports unknown keys', () => {
    const r = store.answer({ type: 'series/request', id: 1, key: 'trajectory/estimate', widthPx: 10 });
    expect(new Float64Array(r.x).length).toBeLessThanOrEqual(1001);
    expect(new Float64Array(r.line ?? new ArrayBuffer(0))[0]).toBe(2);
    const u = store.answer({ type: 'series/request', id: 2, key: 'nope', widthPx: 10 });
    expect([u.error, u.x.byteLength]).toEqual(['no series "nope"', 0]);
  });
  it('copies a view over part of a buffer into an exact-size buffer', () => {
    const big = new Float64Array([1, 2, 3, 4]);
    expect(toArrayBuffer(big)).toBe(big.buffer);
    expect(Array.from(new Float64Array(toArrayBuffer(big.subarray(1, 3))))).toEqual([2, 3]);
  });
});

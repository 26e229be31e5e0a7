import { describe, expect, it } from 'vitest';
import { analyzeUwb } from '../../../extension/core/uwb/index';
import { DEFAULT_SETTINGS } from '../../../extension/core/settings';
import { finiteJson } from '../../../extension/core/finite';
import { REPORT_SCHEMA } from '../../../extension/core/report';
import { makeSeededRandom } from '../../../extension/core/stats/seededRandom';
import type { NavLog } from '../../../extension/core/model';
import { reportProblems } from '../../helpers/reportSchema';
import { simulateUwb } from './simulate';

function reportOf(log: NavLog): unknown {
  const out = analyzeUwb(log, DEFAULT_SETTINGS);
  return finiteJson({
    schema: REPORT_SCHEMA, tool: { version: '0.1.0' }, source: { path: log.path, format: 'csv', rows: log.rows, files: [] },
    settings: { confidence: 0.95, gate: 0.999, window_s: 5, imuPreset: 'consumer' }, partial: false, time: { epochs: 0 },
    channels: [], uwb: out.block, notes: [], findings: out.findings, worst: [],
  });
}

describe('bad input never throws and the block stays finite', () => {
  it('values corrupted with NaN, Infinity, huge numbers, bad ids and shuffled times (seeded)', () => {
    for (const seed of [1, 2, 3]) {
      for (const kind of ['tdoa', 'range'] as const) {
        const log = simulateUwb({ seed, kind, duration_s: 20 });
        const rng = makeSeededRandom(100 + seed);
        const bad = [NaN, Infinity, -Infinity, 1e300, -5, 0];
        const corrupt = (a: Float64Array): void => {
          for (let k = 0; k < a.length; k++) if (rng.uniform() < 0.05) a[k] = bad[Math.floor(rng.uniform() * bad.length)];
        };
        const ch = log.channels[0];
        corrupt(ch.nu);
        corrupt(ch.S!);
        corrupt(ch.t_s);
        for (let k = 0; k < ch.length; k++) if (rng.uniform() < 0.02) ch.id[k] = rng.uniform() < 0.5 ? 999 : NaN;
        if (log.tdoa) { corrupt(log.tdoa.d_m); corrupt(log.tdoa.i); }
        if (log.ranges) { corrupt(log.ranges.r_m); corrupt(log.ranges.anchor); }
        corrupt(log.state.columns.get('p_x')!);
        corrupt(log.state.columns.get('gt_p_z')!);
        log.anchors[2].p = [NaN, 1, 2];
        log.anchors[4].p = [Infinity, 0, 0];
        expect(reportProblems(reportOf(log))).toEqual([]);
      }
    }
  });
  it('degenerate geometry: all anchors at one point, tag on an anchor', () => {
    const same = Array.from({ length: 8 }, () => [5, 5, 2] as [number, number, number]);
    const log = simulateUwb({ anchors: same, duration_s: 10 });
    expect(reportProblems(reportOf(log))).toEqual([]);
    const b = analyzeUwb(log, DEFAULT_SETTINGS).block!;
    expect(b.dop.median).toBeUndefined();
    expect(b.multilateration.fixes).toBe(0);
    const onAnchor = simulateUwb({ staticTag: [0, 0, 2.8], duration_s: 5 });
    expect(reportProblems(reportOf(onAnchor))).toEqual([]);
  });
  it('empty streams and a channel whose ids are not pairs: no UWB block', () => {
    const log = simulateUwb({ duration_s: 5, withRaw: false });
    log.channels[0] = { ...log.channels[0], ids: log.channels[0].ids.map((x) => `sat${x.replace('-', '')}`) };
    expect(analyzeUwb(log, DEFAULT_SETTINGS).block).toBeUndefined();
    const empty = simulateUwb({ duration_s: 5, withUpdates: false });
    empty.tdoa = { ...empty.tdoa!, length: 0 };
    expect(analyzeUwb(empty, DEFAULT_SETTINGS).block).toBeUndefined();
  });
  it('no anchor positions at all: statistics still come, geometry and fixes do not, and a note says why', () => {
    const log = simulateUwb({ duration_s: 10 });
    const out = analyzeUwb({ ...log, anchors: [] }, DEFAULT_SETTINGS);
    expect(out.block!.anchors.length).toBe(8);
    expect(out.block!.anchors.every((a) => a.updates > 0 && a.nis.mean !== undefined)).toBe(true);
    expect(out.block!.multilateration.fixes).toBe(0);
    expect(out.block!.anchorsWithoutPosition.length).toBe(8);
    expect(out.findings.filter((f) => f.kind === 'note').length).toBe(1);
    expect(out.findings.some((f) => f.kind === 'too-few-anchors')).toBe(true);
  });
});

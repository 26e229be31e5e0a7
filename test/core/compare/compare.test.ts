/**
 * Comparison of runs on their common span, with seeded runs of our own demo generator (invented scene): a clean
 * run against the same seed with the generator's documented faults (a known degradation), runs of different lengths,
 * rates and time bases. Checks: figures, verdicts and overlay data.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { generateWarehouseLog, warehouseFaults, type WarehouseOptions } from '../../../extension/core/demo/warehouse';
import { analyzeFile, type FileAnalysis } from '../../../extension/node/analyzeFile';
import { resolveSettings } from '../../../extension/core/settings';
import { compareRuns, type Comparison } from '../../../extension/core/compareRuns';
import { compareReports, alignmentOffsets, commonSpan } from '../../../extension/core/compare';
import { cropLog } from '../../../extension/core/crop';
import { reportProblems } from '../../helpers/reportSchema';

const dir = mkdtempSync(path.join(tmpdir(), 'residuum-compare-'));

async function runOf(name: string, options: WarehouseOptions): Promise<FileAnalysis> {
  const file = path.join(dir, name);
  writeFileSync(file, [...generateWarehouseLog({ imuRate_hz: 20, ...options })].join(''));
  const a = await analyzeFile(file);
  expect(reportProblems(a.report)).toEqual([]);
  return a;
}

function compare(runs: FileAnalysis[], align: Parameters<typeof compareRuns>[2], buckets?: number): Comparison {
  const r = compareRuns(runs, runs.map(() => resolveSettings()), align, buckets);
  if (!r.ok) throw new Error(r.message);
  for (const rep of r.comparison.reports) expect(reportProblems(rep)).toEqual([]);
  return r.comparison;
}

function figure(c: Comparison, what: string) {
  const f = c.figures.find((x) => x.what === what);
  if (!f) throw new Error(`no figure ${what}: ${c.figures.map((x) => x.what).join(', ')}`);
  return f;
}

let long: FileAnalysis;
let short: FileAnalysis;
let clean: FileAnalysis;
let degraded: FileAnalysis;
const degradedOptions: WarehouseOptions = { duration_s: 40, rate_hz: 50, seed: 5, faults: true, t0_s: 100 };

beforeAll(async () => {
  // The generator draws epoch by epoch, so the 30 s run is the first 30 s of the 40 s one (same seed, no faults).
  long = await runOf('long.csv', { duration_s: 40, seed: 9, faults: false });
  short = await runOf('short.csv', { duration_s: 30, seed: 9, faults: false });
  clean = await runOf('clean.csv', { duration_s: 30, seed: 5, faults: false });
  degraded = await runOf('degraded.csv', degradedOptions);
}, 120_000);

describe('common span', () => {
  it('a longer run cropped to the common span gives exactly the figures of the run that is its prefix', () => {
    const c = compare([long, short], { by: 'time' });
    expect(c.span.start).toBe(0);
    expect(c.span.end).toBeCloseTo(29.99, 9);
    expect(c.runs[0].cropped).toBe(true);
    expect(c.runs[1].cropped).toBe(false);
    expect(c.reports[0].settings.span_s).toEqual(c.runs[0].window);
    expect(c.reports[0].time).toEqual(short.report.time);
    expect(c.figures.length).toBeGreaterThan(10);
    for (const f of c.figures) {
      expect(f.values[0], f.what).not.toBeNull();
      expect(f.values[0]!, f.what).toBeCloseTo(f.values[1]!, 9);
      expect(f.best, f.what).toBeUndefined(); // equal figures: no better run
    }
    expect(c.reports[0].channels.map((ch) => ch.updates)).toEqual(short.report.channels.map((ch) => ch.updates));
  });

  it('runs of different lengths, rates and time bases: aligned by start, span stated in both time bases', () => {
    const c = compare([clean, degraded], { by: 'start' });
    expect(c.runs.map((r) => r.offset_s)).toEqual([0, 100]);
    expect(c.span.start).toBe(0);
    expect(c.span.end).toBeCloseTo(29.99, 9); // the shorter run ends at 29.99 s (100 Hz grid)
    expect(c.runs[1].window[0]).toBe(100);
    expect(c.runs[1].window[1]).toBeCloseTo(129.99, 9);
    expect(c.runs[1].cropped).toBe(true);
    expect(c.reports[1].time.start).toBe(100);
    expect(c.reports[1].time.end!).toBeLessThanOrEqual(129.99 + 1e-9);
  });

  it('by log time the same two runs do not overlap: a plain message', () => {
    const r = compareRuns([clean, degraded], [resolveSettings(), resolveSettings()], { by: 'time' });
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.message).toMatch(/share no common time span after aligning by log time \(A 0\.\.29\.99 s, B 100\.\.139\.98 s\)/);
  });

  it('aligned by the first bias-step finding: offsets are those findings times', () => {
    const a = compare([degraded, clean], { by: 'start' });
    expect(a.runs).toHaveLength(2);
    const withStep = [degraded.report, { ...degraded.report, findings: degraded.report.findings.map((f) => ({ ...f, t: f.t === undefined ? undefined : f.t + 7 })) }];
    const off = alignmentOffsets(withStep, { by: 'event', kind: 'bias-step' });
    expect(off.ok).toBe(true);
    if (off.ok) {
      const first = Math.min(...degraded.report.findings.filter((f) => f.kind === 'bias-step').map((f) => f.t!));
      expect(off.offsets_s[0]).toBe(first);
      expect(off.offsets_s[1]).toBeCloseTo(first + 7, 12);
      // The step is injected at half the duration (warehouse.ts fault 2); the finding lies near it.
      const step = warehouseFaults(degradedOptions).find((f) => f.kind === 'gyro-bias-step')!;
      expect(Math.abs(first - step.t_s)).toBeLessThan(5);
    }
  });
});

describe('known degradation', () => {
  let c: Comparison;
  beforeAll(() => {
    c = compare([clean, degraded], { by: 'start' }, 100_000);
  });

  it('verdicts: the clean run is better in the TDOA consistency figures', () => {
    const outliers = figure(c, 'tdoa: outliers');
    expect(outliers.values[0]).toBeLessThan(outliers.values[1]!);
    expect(outliers.best).toBe(0);
    expect(outliers.deltas[1]).toBe(outliers.values[1]! - outliers.values[0]!);
    const inside = figure(c, 'tdoa: NIS inside 95%');
    // Overconfident S for 12% of the run (fault 3): a visibly smaller share inside the bounds.
    expect(inside.values[1]!).toBeLessThan(inside.values[0]! - 0.02);
    expect(inside.best).toBe(0);
    expect(inside.target).toBe(0.95);
    const mean = figure(c, 'tdoa: NIS mean');
    expect(mean.target).toBe(1);
    expect(mean.values[1]!).toBeGreaterThan(mean.values[0]!);
    expect(mean.best).toBe(0);
  });

  it('the figures are those of each run analysed on its window (not of the whole run)', () => {
    const whole = degraded.report.channels.find((ch) => ch.name === 'tdoa')!;
    const windowed = c.reports[1].channels.find((ch) => ch.name === 'tdoa')!;
    expect(windowed.updates).toBeLessThan(whole.updates);
    expect(figure(c, 'tdoa: outliers').values[1]).toBe(windowed.outliers);
  });

  it('overlay: each run on the common axis, restricted to the span, values those of its series', () => {
    const o = c.overlays.find((x) => x.key === 'nisWindow/tdoa')!;
    expect(o.runs.map((r) => r.run)).toEqual([0, 1]);
    const src = c.reports.length && compareRuns([clean, degraded], [resolveSettings(), resolveSettings()], { by: 'start' }, 100_000);
    if (!src || !src.ok) throw new Error('comparison failed');
    const series = src.series[1].find((s) => s.key === 'nisWindow/tdoa')!;
    const b = o.runs[1];
    expect(b.x.length).toBeGreaterThan(100);
    for (let k = 0; k < b.x.length; k += 37) {
      expect(b.x[k]).toBeGreaterThanOrEqual(c.span.start - 1e-9);
      expect(b.x[k]).toBeLessThanOrEqual(c.span.end + 1e-9);
      const i = series.x.indexOf(b.x[k] + 100);
      expect(i, `x ${b.x[k]}`).toBeGreaterThanOrEqual(0);
      expect(b.y[k]).toBe(Number.isFinite(series.y[i]) ? series.y[i] : null);
    }
    // Over the overconfident interval (fault 3, shifted to common time) the degraded run's window NIS peaks far above
    // the clean run's (S a quarter of the truth: NIS about 4 times larger).
    const fault = warehouseFaults(degradedOptions).find((f) => f.kind === 'overconfident')!;
    const maxIn = (r: { x: number[]; y: (number | null)[] }, t0: number, t1: number): number => {
      const v = r.y.filter((y, k) => y !== null && r.x[k] >= t0 && r.x[k] <= t1) as number[];
      expect(v.length).toBeGreaterThan(10);
      return Math.max(...v);
    };
    // The windows are 5 s long (default setting): those ending up to 5 s after the fault still hold it.
    const t0 = fault.t_s - 100;
    const t1 = Math.min(fault.tEnd_s! - 100 + 5, c.span.end);
    expect(maxIn(o.runs[1], t0, t1)).toBeGreaterThan(2 * maxIn(o.runs[0], t0, t1));
  });

  it('error magnitude overlays exist for both runs', () => {
    for (const key of ['error/position/norm', 'error/orientation/norm']) {
      const o = c.overlays.find((x) => x.key === key)!;
      expect(o.runs).toHaveLength(2);
      for (const r of o.runs) expect(r.y.filter((y) => y !== null && y >= 0).length).toBeGreaterThan(100);
    }
  });
});

describe('compareReports rules', () => {
  it('NIS inside 95%: closer to 0.95 wins, not the larger share; equal distances tie', () => {
    const a = structuredClone(clean.report);
    const b = structuredClone(clean.report);
    a.channels[0].nis.inside95 = 0.99;
    b.channels[0].nis.inside95 = 0.92;
    const f = compareReports([a, b]).find((x) => x.what === `${a.channels[0].name}: NIS inside 95%`)!;
    expect(f.best).toBe(1);
    b.channels[0].nis.inside95 = 0.91;
    expect(compareReports([a, b]).find((x) => x.what === f.what)!.best).toBeUndefined();
  });

  it('three runs; a figure missing in one run is null there, and the best of the others wins', () => {
    const a = structuredClone(clean.report);
    const b = structuredClone(clean.report);
    const c3 = structuredClone(clean.report);
    delete (a.errors as Record<string, unknown>).position;
    ((b.errors as Record<string, Record<string, number>>).position).rmse = 0.2;
    ((c3.errors as Record<string, Record<string, number>>).position).rmse = 0.1;
    const f = compareReports([a, b, c3]).find((x) => x.what === 'position RMSE')!;
    expect(f.values).toEqual([null, 0.2, 0.1]);
    expect(f.deltas).toEqual([null, null, null]);
    expect(f.best).toBe(2);
  });

  it('commonSpan is the intersection after the offsets', () => {
    expect(commonSpan([clean.report, degraded.report], [0, 100])).toEqual({ start: 0, end: clean.report.time.end });
    expect(commonSpan([clean.report, degraded.report], [0, 0])).toBeUndefined();
  });
});

describe('cropLog', () => {
  it('keeps exactly the records inside the window, with their innovation rows', () => {
    const log = degraded.log;
    const cropped = cropLog(log, 110, 120);
    for (const s of [cropped.state, ...cropped.channels]) {
      for (let i = 0; i < s.length; i++) {
        expect(s.t_s[i]).toBeGreaterThanOrEqual(110);
        expect(s.t_s[i]).toBeLessThanOrEqual(120);
      }
    }
    const mag = log.channels.find((ch) => ch.name === 'mag')!;
    const magC = cropped.channels.find((ch) => ch.name === 'mag')!;
    let expected = 0;
    for (let i = 0; i < mag.length; i++) if (mag.t_s[i] >= 110 && mag.t_s[i] <= 120) expected++;
    expect(magC.length).toBe(expected);
    const first = Array.from(mag.t_s.subarray(0, mag.length)).findIndex((t) => t >= 110);
    expect(Array.from(magC.nu.subarray(0, 3))).toEqual(Array.from(mag.nu.subarray(3 * first, 3 * first + 3)));
    expect(magC.line[0]).toBe(mag.line[first]);
    expect(log.state.length).toBeGreaterThan(cropped.state.length); // the input is not modified
  });
});

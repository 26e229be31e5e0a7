/**
 * The comparison and the Monte Carlo check in the analysis worker thread (dist/analysisWorker.js), on seeded runs
 * of our own warehouse scenario written to a temporary folder, and the panel messages made from their results
 * (extension/host/runsMessages.ts). Skips with a message when the worker has not been built yet.
 */
import { createHash } from 'node:crypto';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateWarehouseLog, type WarehouseOptions } from '../../extension/core/demo/warehouse';
import { runComparison, runMonteCarlo } from '../../extension/host/runAnalysis';
import { compareReadyMessage, compareStateMessage, isRunLog, monteCarloReadyMessage, monteCarloStateMessage, MONTE_CARLO_BUCKETS } from '../../extension/host/runsMessages';
import { parseHostMessage } from '../../extension/protocol';

const root = path.resolve(__dirname, '../..');
const worker = path.join(root, 'dist', 'analysisWorker.js');
const ready = existsSync(worker);
if (!ready) console.log(`runsWorker.test: skipped (build first: ${worker})`);

let dir = '';
function write(name: string, options: WarehouseOptions): string {
  const file = path.join(dir, name);
  writeFileSync(file, [...generateWarehouseLog({ duration_s: 20, ...options })].join(''));
  return file;
}

describe.skipIf(!ready)('comparison and Monte Carlo in the worker', () => {
  let clean = '', degraded = '', shifted = '', mc: string[] = [];
  beforeAll(() => {
    dir = mkdtempSync(path.join(tmpdir(), 'residuum-runs-'));
    clean = write('clean.csv', { seed: 1, faults: false });
    // The same seed with the scenario's documented faults injected (NLOS ranges, an overconfident interval ...).
    degraded = write('degraded.csv', { seed: 1, faults: true });
    shifted = write('shifted.csv', { seed: 2, faults: false, t0_s: 5 });
    mc = [clean, write('mc2.csv', { seed: 2, faults: false }), write('mc3.csv', { seed: 3, faults: false })];
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('compares a clean and a degraded run: the degraded one has more outliers and loses on them', async () => {
    const r = await runComparison(worker, { kind: 'compare', paths: [clean, degraded], align: { by: 'time' } }, () => undefined);
    const m = compareReadyMessage(r.comparison, r.eventKinds, true);
    expect(m.state).toBe('ready');
    expect(m.runs.map((x) => [x.label, x.name, x.cropped])).toEqual([['A', 'clean.csv', false], ['B', 'degraded.csv', false]]);
    // The hash the panel shows is the file's SHA-256 (node:crypto as the outside reference).
    expect(m.runs[1].sha256).toBe(createHash('sha256').update(readFileSync(degraded)).digest('hex'));
    const outliers = m.figures.find((f) => f.what === 'tdoa: outliers');
    expect(outliers).toBeDefined();
    expect(outliers!.values[1]!).toBeGreaterThan(outliers!.values[0]!);
    expect(outliers!.best).toBe(0);
    expect(outliers!.deltas[1]).toBe(outliers!.values[1]! - outliers!.values[0]!);
    const inside = m.figures.find((f) => f.what === 'tdoa: NIS inside 95%')!;
    expect(Math.abs(inside.values[0]! - 0.95)).toBeLessThan(Math.abs(inside.values[1]! - 0.95));
    expect(inside.best).toBe(0);
    const nis = m.overlays.find((o) => o.key === 'nisWindow/tdoa');
    expect(nis?.runs.map((x) => x.run)).toEqual([0, 1]);
    for (const run of nis!.runs) {
      expect(run.x.length).toBeGreaterThan(100);
      expect(run.x.every((x) => x >= m.span!.start - 1e-9 && x <= m.span!.end + 1e-9)).toBe(true);
    }
    expect(m.focus).toBe(true);
  }, 120_000);

  it('states the common span of runs on different clocks, and aligns them by start on request', async () => {
    const byTime = await runComparison(worker, { kind: 'compare', paths: [clean, shifted], align: { by: 'time' } }, () => undefined);
    const c = byTime.comparison;
    // clean covers 0..19.99 s, shifted 5..24.99 s: on one clock they share 5..19.99 s, and both are cropped to it.
    expect(c.span.start).toBeCloseTo(5, 9);
    expect(c.span.end).toBeCloseTo(19.99, 9);
    expect(c.runs.map((r) => r.cropped)).toEqual([true, true]);
    const byStart = await runComparison(worker, { kind: 'compare', paths: [clean, shifted], align: { by: 'start' } }, () => undefined);
    expect(byStart.comparison.span.start).toBe(0);
    expect(byStart.comparison.span.end).toBeCloseTo(19.99, 9);
    expect(byStart.comparison.runs.map((r) => r.offset_s)).toEqual([0, 5]);
  }, 120_000);

  it('refuses an event alignment a run cannot follow, with a plain message', async () => {
    await expect(runComparison(worker, { kind: 'compare', paths: [clean, shifted], align: { by: 'event', kind: 'time-backwards' } }, () => undefined)).rejects.toMatchObject({
      name: 'AnalysisError',
      message: expect.stringMatching(/cannot compare: run A .*no 'time-backwards' finding/),
    });
  }, 120_000);

  it('averages NEES and NIS over three consistent runs with the chi2(N n)/N interval as a band', async () => {
    const fractions: number[] = [];
    const r = await runMonteCarlo(worker, { kind: 'montecarlo', paths: mc }, (f) => fractions.push(f));
    expect(fractions.at(-1)).toBe(1);
    const m = monteCarloReadyMessage(r.block, mc, true);
    expect(m.runs).toBe(3);
    expect(m.files).toEqual(['clean.csv', 'mc2.csv', 'mc3.csv']);
    const pos = m.series.find((s) => s.key === 'montecarlo/nees/position');
    expect(pos).toBeDefined();
    // Source: reference-checks.md sec 1 (NIST/SEMATECH chi-square table, df 9: 2.700389, 19.022768) divided by N = 3,
    // the N-run interval chi2(N n)/N of sec 2.2 (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4).
    expect(pos!.bounds95![0]).toBeCloseTo(2.700389 / 3, 5);
    expect(pos!.bounds95![1]).toBeCloseTo(19.022768 / 3, 5);
    // Consistent seeded runs: about 95% of the epochs inside (a wide margin: 2000 epochs, correlated errors).
    expect(pos!.inside95!).toBeGreaterThan(0.85);
    const x = new Float64Array(pos!.x), y = new Float64Array(pos!.y), lo = new Float64Array(pos!.lo), hi = new Float64Array(pos!.hi);
    expect(x.length).toBeGreaterThan(100);
    expect(x.length).toBeLessThanOrEqual(2 * MONTE_CARLO_BUCKETS + 2);
    expect([y.length, lo.length, hi.length]).toEqual([x.length, x.length, x.length]);
    let banded = 0;
    for (let i = 0; i < x.length; i++) {
      if (!Number.isFinite(lo[i])) continue;
      banded++;
      expect(lo[i]).toBeCloseTo(2.700389 / 3, 5); // all three runs present at every epoch
      expect(hi[i]).toBeCloseTo(19.022768 / 3, 5);
    }
    expect(banded).toBe(x.length);
    const tdoa = m.series.find((s) => s.key === 'montecarlo/nis/tdoa');
    // Source: reference-checks.md sec 1, df 3: 0.215795, 9.348404, divided by N = 3 (one dof per TDOA update).
    expect(tdoa!.bounds95![0]).toBeCloseTo(0.215795 / 3, 5);
    expect(tdoa!.bounds95![1]).toBeCloseTo(9.348404 / 3, 5);
  }, 120_000);
});

describe('state messages of the views', () => {
  it('name the runs by file name only, and pass the webview guard', () => {
    const c = compareStateMessage('loading', ['/data/runs/a.csv', '/data/runs/b.csv'], { by: 'start' }, 'Comparing 2 runs…', true);
    expect(c.runs.map((r) => [r.label, r.name])).toEqual([['A', 'a.csv'], ['B', 'b.csv']]);
    expect(c).toMatchObject({ state: 'loading', message: 'Comparing 2 runs…', align: { by: 'start' }, figures: [], overlays: [], focus: true });
    expect(parseHostMessage(c)).toBe(c);
    const m = monteCarloStateMessage('error', ['/x/r1.csv'], 'A Monte Carlo check needs two or more runs');
    expect(m).toMatchObject({ state: 'error', files: ['r1.csv'], runs: 1, series: [] });
    expect(m.focus).toBeUndefined();
    expect(parseHostMessage(m)).toBe(m);
  });
});

describe('run files of a folder', () => {
  it('takes logs and leaves mapping, notes, report and gate files out', () => {
    expect(['a.csv', 'b.JSONL', 'c.ndjson', 'd.json', 'a.csv.map.json', 'a.csv.notes.json', 'a.report.json', 'residuum.gate.json', 'x.md'].filter(isRunLog)).toEqual(['a.csv', 'b.JSONL', 'c.ndjson', 'd.json']);
  });
});

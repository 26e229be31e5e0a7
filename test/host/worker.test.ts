// The analysis worker thread (dist/analysisWorker.js, built by scripts/build.mjs) on the bundled demo log: the
// result arrives with its series columns intact (transferred buffers), and cancelling rejects with an AbortError.
// Skips with a message when the worker or the demo log has not been built yet.
import { existsSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import { runAnalysis } from '../../extension/host/runAnalysis';

const root = path.resolve(__dirname, '../..');
const worker = path.join(root, 'dist', 'analysisWorker.js');
const demo = path.join(root, 'demo', 'warehouse-flight.csv');
const ready = existsSync(worker) && existsSync(demo);
if (!ready) console.log(`worker.test: skipped (build first: ${worker}, ${demo})`);

describe.skipIf(!ready)('analysis worker', () => {
  it('analyses the demo log off the main thread and reports progress', async () => {
    const fractions: number[] = [];
    const r = await runAnalysis(worker, { path: demo }, (f) => fractions.push(f));
    expect(r.report.schema).toBe('residuum.report/1');
    expect(r.report.time.epochs).toBeGreaterThan(0);
    expect(r.series.length).toBeGreaterThan(0);
    for (const s of r.series) {
      expect(s.x).toBeInstanceOf(Float64Array);
      expect(s.y.length).toBe(s.x.length);
    }
    expect(fractions.length).toBeGreaterThan(0);
    expect(fractions.at(-1)).toBe(1);
  });
  it('rejects with AbortError when cancelled', async () => {
    const controller = new AbortController();
    const p = runAnalysis(worker, { path: demo }, () => controller.abort(), controller.signal);
    await expect(p).rejects.toMatchObject({ name: 'AbortError' });
  });
  it('reports an unreadable log as an input error', async () => {
    await expect(runAnalysis(worker, { path: path.join(root, 'no-such-log.csv') }, () => undefined)).rejects.toMatchObject({ name: 'AnalysisError', input: true });
  });
});

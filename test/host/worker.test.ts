// The analysis worker thread (dist/analysisWorker.js, built by scripts/build.mjs) on the bundled demo log: the
// result arrives with its series columns intact (transferred buffers), and cancelling rejects with an AbortError.
// Skips with a message when the worker or the demo log has not been built yet.
import { appendFileSync, existsSync, mkdtempSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import { AnalysisSession, runAnalysis } from '../../extension/host/runAnalysis';
import { analyzeFile } from '../../extension/node/analyzeFile';

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

describe.skipIf(!ready)('analysis session worker (a growing log)', () => {
  const dir = mkdtempSync(path.join(tmpdir(), 'residuum-session-'));
  const lines = ready ? readFileSync(demo, 'utf8').split(/(?<=\n)/) : [];
  const cut = Math.floor(lines.length / 2);

  it('reads only the appended bytes on the next run, with the series intact', async () => {
    const p = path.join(dir, 'grow.csv');
    writeFileSync(p, lines.slice(0, cut).join(''));
    const session = new AnalysisSession(worker, { path: p });
    try {
      const a = await session.run(() => undefined);
      const size1 = statSync(p).size;
      expect(a.read).toEqual({ mode: 'tail', start: 0, bytes: size1, total: size1 });
      appendFileSync(p, lines.slice(cut).join(''));
      const b = await session.run(() => undefined);
      expect(b.read).toEqual({ mode: 'tail', start: size1, bytes: statSync(p).size - size1, total: statSync(p).size });
      // The worker kept the log's columns through the first reply (copied, not transferred): the second report is
      // that of a whole read of the grown file (the command line's one-pass reader).
      const whole = await analyzeFile(p);
      expect(b.report.time.epochs).toBe(whole.report.time.epochs);
      expect(b.report.worst).toEqual(JSON.parse(JSON.stringify(whole.report.worst)));
      expect(b.series.map((s) => [s.key, s.x.length])).toEqual(whole.series.map((s) => [s.key, s.x.length]));
      for (const s of b.series) expect(s.y.length).toBe(s.x.length);
    } finally {
      session.dispose();
    }
  });

  it('after a cancelled run, the next run reads the log from the start', async () => {
    const p = path.join(dir, 'cancel.csv');
    writeFileSync(p, lines.join(''));
    const session = new AnalysisSession(worker, { path: p });
    try {
      await session.run(() => undefined);
      const controller = new AbortController();
      controller.abort();
      await expect(session.run(() => undefined, controller.signal)).rejects.toMatchObject({ name: 'AbortError' });
      const c2 = new AbortController();
      const p2 = session.run(() => c2.abort(), c2.signal);
      await expect(p2).rejects.toMatchObject({ name: 'AbortError' });
      const again = await session.run(() => undefined);
      expect(again.read).toMatchObject({ start: 0, bytes: statSync(p).size });
    } finally {
      session.dispose();
    }
  });
});

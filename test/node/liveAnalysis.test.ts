/**
 * The analysis the editor keeps between runs of a growing log (extension/node/liveAnalysis.ts): a run after the log
 * grew reads only the appended bytes, and its report equals that of reading the whole file once with the command
 * line's analyzeFile (the outside check: the one-pass reader the CLI uses). A truncated or replaced log, or a changed
 * mapping file, is read again from the start with a note; an unfinished last line waits for its line end.
 * Real files in a temporary folder; the log is the bundled demo scene (invented data), cut at a line boundary.
 */
import { appendFileSync, closeSync, copyFileSync, mkdtempSync, openSync, readFileSync, renameSync, statSync, writeFileSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import { analyzeFile } from '../../extension/node/analyzeFile';
import { LiveAnalysis } from '../../extension/node/liveAnalysis';
import { detachSeries, reachableBuffers } from '../../extension/host/analysisWorker';
import { describeRead, restartNotice } from '../../extension/host/liveText';

const root = path.resolve(__dirname, '../..');
const demo = path.join(root, 'demo', 'warehouse-flight.csv');
const dir = mkdtempSync(path.join(tmpdir(), 'residuum-live-'));
const lines = readFileSync(demo, 'utf8').split(/(?<=\n)/);
const cut = Math.floor(lines.length * 0.6);
const head = lines.slice(0, cut).join('');
const rest = lines.slice(cut).join('');

/** The report as JSON (what the panel and the report file get). */
function comparable(r: { report: unknown }): unknown {
  return JSON.parse(JSON.stringify(r.report));
}

describe('LiveAnalysis of a growing log', () => {
  it('reads only the appended bytes, and the report equals a whole read of the file', async () => {
    const p = path.join(dir, 'grow.csv');
    writeFileSync(p, head);
    const live = new LiveAnalysis(p);
    const fractions: number[] = [];
    const first = await live.run({ onProgress: (f) => fractions.push(f) });
    expect(first.read).toEqual({ mode: 'tail', start: 0, bytes: Buffer.byteLength(head), total: Buffer.byteLength(head) });
    expect(fractions.at(-1)).toBe(1);
    const epochs1 = first.report.time.epochs;
    expect(epochs1).toBeGreaterThan(0);

    appendFileSync(p, rest);
    const second = await live.run();
    expect(second.read).toEqual({ mode: 'tail', start: Buffer.byteLength(head), bytes: Buffer.byteLength(rest), total: statSync(p).size });
    expect(second.report.time.epochs).toBeGreaterThan(epochs1);

    const whole = await analyzeFile(p);
    expect(comparable(second)).toEqual(comparable(whole));
    expect(second.log.diagnostics.some((d) => /no line end yet/.test(d.message))).toBe(false);
  });

  it('an unchanged log reads nothing and gives the same report', async () => {
    const p = path.join(dir, 'same.csv');
    writeFileSync(p, head);
    const live = new LiveAnalysis(p);
    const a = await live.run();
    const b = await live.run();
    expect(b.read).toMatchObject({ mode: 'tail', start: a.read.total, bytes: 0 });
    expect(comparable(b)).toEqual(comparable(a));
  });

  it('a truncated log is read again from the start, with a note', async () => {
    const p = path.join(dir, 'trunc.csv');
    writeFileSync(p, head + rest);
    const live = new LiveAnalysis(p);
    const full = await live.run();
    writeFileSync(p, head); // same file, shorter
    const r = await live.run();
    expect(r.read).toMatchObject({ mode: 'tail', start: 0, restarted: 'truncated', bytes: Buffer.byteLength(head) });
    expect(r.report.time.epochs).toBeLessThan(full.report.time.epochs);
    expect(r.log.diagnostics.some((d) => /truncated while it was being followed/.test(d.message))).toBe(true);
    const whole = (await analyzeFile(p)).report.source.sha256;
    expect(whole).toMatch(/^[0-9a-f]{64}$/);
    expect(r.report.source.sha256).toBe(whole);
  });

  it('a log rewritten in place by another run (same file, not truncated, longer) is read again from the start', async () => {
    const p = path.join(dir, 'rewrite.csv');
    writeFileSync(p, head);
    const live = new LiveAnalysis(p);
    await live.run();
    // Another run of the estimator written over the same bytes from the start (the file opened without truncation):
    // its first line differs and it is longer than what was read.
    const fd = openSync(p, 'r+');
    writeSync(fd, (head + rest).replace('warehouse inspection flight', 'warehouse inspection FLIGHT'), 0);
    closeSync(fd);
    const r = await live.run();
    expect(r.read).toMatchObject({ mode: 'tail', start: 0, restarted: 'rewritten', total: statSync(p).size });
    expect(r.log.diagnostics.some((d) => /rewritten in place while it was being followed/.test(d.message))).toBe(true);
    const whole = await analyzeFile(p);
    expect(r.report.source.sha256).toBe(whole.report.source.sha256);
    expect(r.report.time).toEqual(whole.report.time);
    expect(r.report.channels).toEqual(whole.report.channels);
  });

  it('a log replaced by another file (renamed over it) is read again from the start', async () => {
    const p = path.join(dir, 'replace.csv');
    writeFileSync(p, head);
    const live = new LiveAnalysis(p);
    await live.run();
    writeFileSync(`${p}.new`, head + rest);
    renameSync(`${p}.new`, p);
    const r = await live.run();
    expect(r.read).toMatchObject({ start: 0, restarted: 'replaced', total: statSync(p).size });
    // The same report as a whole read, plus the note saying the log was read again.
    const note = r.report.findings.filter((f) => f.kind === 'note' && /replaced by another file while it was being followed/.test(f.message));
    expect(note.length).toBe(1);
    const withoutNote = { ...r.report, findings: r.report.findings.filter((f) => !note.includes(f)) };
    expect(comparable({ report: withoutNote })).toEqual(comparable(await analyzeFile(p)));
  });

  it('a changed mapping file makes the next run read the log from the start', async () => {
    const p = path.join(dir, 'mapped.csv');
    writeFileSync(p, head);
    writeFileSync(`${p}.map.json`, JSON.stringify({ meta: { vehicle: 'first' } }));
    const live = new LiveAnalysis(p);
    const a = await live.run();
    expect(a.log.files).toContain(`${p}.map.json`);
    appendFileSync(p, rest);
    writeFileSync(`${p}.map.json`, JSON.stringify({ meta: { vehicle: 'second' } }));
    const b = await live.run();
    expect(b.read).toMatchObject({ mode: 'tail', start: 0, restarted: 'mapping', total: statSync(p).size });
    expect(b.log.meta.vehicle).toBe('second');
    expect(comparable(b)).toEqual(comparable(await analyzeFile(p)) as object);
  });

  it('holds back a last line without a line end until it is complete, and says so', async () => {
    const p = path.join(dir, 'partial.csv');
    const next = lines[cut];
    writeFileSync(p, head + next.slice(0, 10));
    const live = new LiveAnalysis(p);
    const a = await live.run();
    expect(a.log.diagnostics.find((d) => /no line end yet/.test(d.message))?.severity).toBe('info');
    appendFileSync(p, next.slice(10));
    const b = await live.run();
    expect(b.read.start).toBe(a.read.total);
    expect(b.log.diagnostics.some((d) => /no line end yet/.test(d.message))).toBe(false);
    writeFileSync(path.join(dir, 'partial-whole.csv'), head + next);
    const whole = await analyzeFile(path.join(dir, 'partial-whole.csv'));
    expect(b.report.time.epochs).toBe(whole.report.time.epochs);
  });

  it('reads a single JSON document whole on every run', async () => {
    const p = path.join(dir, 'doc.json');
    writeFileSync(p, JSON.stringify({ records: [] }));
    const live = new LiveAnalysis(p);
    const r = await live.run();
    expect(r.read).toMatchObject({ mode: 'whole', start: 0 });
  });

  it('a deleted log is an input error, and the next run starts afresh', async () => {
    const p = path.join(dir, 'gone.csv');
    copyFileSync(demo, p);
    const live = new LiveAnalysis(p);
    await live.run();
    renameSync(p, `${p}.away`);
    await expect(live.run()).rejects.toMatchObject({ name: 'InputError' });
    renameSync(`${p}.away`, p);
    expect((await live.run()).read).toMatchObject({ start: 0, bytes: statSync(p).size });
  });
});

describe('session worker helpers', () => {
  it('copies the series columns that are views of the kept log, and only those', async () => {
    const p = path.join(dir, 'detach.csv');
    writeFileSync(p, head);
    const r = await new LiveAnalysis(p).run();
    const kept = reachableBuffers(r.log);
    expect(kept.has(r.log.state.t_s.buffer)).toBe(true);
    const { series, transfer } = detachSeries(r.series, kept);
    expect(series.length).toBe(r.series.length);
    for (const s of series) for (const a of [s.x, s.y, s.lo, s.hi, s.line]) if (a) expect(kept.has(a.buffer)).toBe(false);
    for (const b of transfer) expect(kept.has(b)).toBe(false);
    // Columns that were not the log's are passed on as they are (transferred, not copied).
    const own = r.series.filter((s) => !kept.has(s.y.buffer));
    expect(own.length).toBeGreaterThan(0);
    for (const s of own) expect(series[r.series.indexOf(s)].y).toBe(s.y);
    for (let i = 0; i < series.length; i++) expect(Array.from(series[i].y.slice(0, 5))).toEqual(Array.from(r.series[i].y.slice(0, 5)));
  });

  it('copies a series column that is a small view of a larger buffer instead of transferring its neighbours', () => {
    const block = new Float64Array(1000);
    const x = block.subarray(0, 100);
    const y = block.subarray(100, 200);
    const whole = new Float64Array(50);
    const { series, transfer } = detachSeries([{ name: 'a', x, y }, { name: 'b', x: whole, y: whole }] as never, new Set());
    expect(series[0].x).not.toBe(x);
    expect(series[0].x.buffer).not.toBe(block.buffer);
    expect(Array.from(series[0].y)).toEqual(Array.from(y));
    expect(transfer).not.toContain(block.buffer);
    expect(transfer).toContain(whole.buffer); // a column that is its whole buffer still moves without a copy
  });

  it('words the read for the output channel and the restart for the panel', () => {
    expect(describeRead({ mode: 'tail', start: 100, bytes: 50, total: 150 })).toBe('read bytes 100..150 (50 bytes)');
    expect(describeRead({ mode: 'tail', start: 0, bytes: 90, total: 90, restarted: 'truncated' })).toBe('read bytes 0..90 (90 bytes, from the start: truncated)');
    expect(describeRead({ mode: 'whole', start: 0, bytes: 7, total: 7 })).toBe('read whole, 7 bytes');
    expect(restartNotice({ mode: 'tail', start: 0, bytes: 1, total: 1, restarted: 'mapping' })).toMatch(/mapping file changed/);
    expect(restartNotice({ mode: 'tail', start: 0, bytes: 1, total: 1, restarted: 'rewritten' })).toMatch(/rewritten in place/);
    expect(restartNotice({ mode: 'tail', start: 5, bytes: 1, total: 6 })).toBeUndefined();
  });
});

/**
 * The command line's two-thread analysis (extension/node/parallelAnalysis.ts, dist/stageWorker.js built by
 * test/globalSetup.ts): the report must be the sequential analysis' report, byte for byte, whether the errors stage
 * ran in the worker or fell back to the main thread (a small log, a missing or failing worker), and the SHA-256 the
 * worker computes must be that of the bytes the main thread analysed (node:crypto over the file is the outside
 * check), also when the file grows, is replaced, truncated or rewritten in place while it is read. A worker that never
 * answers is stopped by the watchdog (limits injected, so it fires at once) and the report is still the sequential one.
 * The logs are the seeded warehouse demo scene of our own (extension/core/demo), large enough to use the worker.
 */
import { createHash } from 'node:crypto';
import { spawnSync } from 'node:child_process';
import {
  appendFileSync, closeSync, copyFileSync, mkdtempSync, openSync, readFileSync, renameSync, rmSync, utimesSync, writeFileSync, writeSync,
} from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { BENCH_OPTIONS, generateWarehouseLog } from '../../extension/core/demo/warehouse';
import { analyzeFile, type AnalyzeFileOptions, type FileAnalysis } from '../../extension/node/analyzeFile';
import { checkIdentity, hashPrefixNow, hashWhileRead, HashProgress, PrefixHasher } from '../../extension/node/prefixHash';
import { rewrittenSince } from '../../extension/node/fileSource';
import { answerLimitMs } from '../../extension/node/parallelAnalysis';
import { reportProblems } from '../helpers/reportSchema';
import { analyzeLog, assembleReport, prepareAnalysis, runStage, type StageParts } from '../../extension/core/analyze';
import { readLogText } from '../../extension/core/read/index';
import { resolveSettings } from '../../extension/core/settings';

const root = path.resolve(__dirname, '../..');
const workerFile = path.join(root, 'dist', 'stageWorker.js');
const demoLog = path.join(root, 'demo', 'warehouse-flight.csv');
/** State epochs of the large log: above the 20,000 below which every stage runs on the main thread. */
const EPOCHS = 24_000;

let dir = '';
let big = '';

const sha256 = (file: string): string => createHash('sha256').update(readFileSync(file)).digest('hex');
const json = (a: FileAnalysis): string => JSON.stringify(a.report, null, 2);
const parallel = (extra: Partial<AnalyzeFileOptions['parallel']> = {}, file = workerFile): AnalyzeFileOptions => ({ parallel: { workerFile: file, ...extra } });

beforeAll(() => {
  dir = mkdtempSync(path.join(tmpdir(), 'residuum-parallel-'));
  big = path.join(dir, 'big.csv');
  writeFileSync(big, [...generateWarehouseLog({ ...BENCH_OPTIONS, rows: EPOCHS })].join(''));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Set the file's times a day back, so any later write moves them whatever the file system's time granularity. */
function ageFile(p: string): void {
  const past = new Date(Date.now() - 86_400_000);
  utimesSync(p, past, past);
}

/** Write `bytes` over the start of `p` through a descriptor opened without truncation (same inode). */
function rewriteInPlace(p: string, bytes: string | Buffer): void {
  const fd = openSync(p, 'r+');
  try {
    const data = typeof bytes === 'string' ? Buffer.from(bytes) : bytes;
    writeSync(fd, data, 0, data.length, 0);
  } finally {
    closeSync(fd);
  }
}

/**
 * The log `text` with the last digit of every p_x (the second field of a data row) moved by 5: the same length, other
 * positions (so another report).
 */
function shiftedPositions(text: string): string {
  return text.split('\n').map((line) => {
    if (!/^\d/.test(line)) return line;
    const cells = line.split(',');
    const x = cells[1];
    if (!/\d$/.test(x)) return line;
    cells[1] = x.slice(0, -1) + String((Number(x.at(-1)) + 5) % 10);
    return cells.join(',');
  }).join('\n');
}

describe('the core steps behind the parallel path', () => {
  it('shared columns: every column of the log on a SharedArrayBuffer, the same report', async () => {
    const text = readFileSync(demoLog, 'utf8');
    const plain = await readLogText(text, demoLog);
    const shared = await readLogText(text, demoLog, { sharedColumns: true });
    const cols = [shared.state.t_s, ...shared.state.columns.values(), ...shared.channels.flatMap((c) => [c.nu, c.id, c.rejected])];
    expect(cols.length).toBeGreaterThan(10);
    for (const c of cols) expect(c.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(plain.state.t_s.buffer).toBeInstanceOf(ArrayBuffer);
    const a = analyzeLog(plain, resolveSettings(), { sha256: 'x' });
    const b = analyzeLog(shared, resolveSettings(), { sha256: 'x' });
    expect(JSON.stringify(b.report)).toBe(JSON.stringify(a.report));
  });

  it('stages run in another order (errors last, resets after bias) assemble the same report', async () => {
    const own = await readLogText(readFileSync(demoLog, 'utf8'), demoLog);
    const settings = resolveSettings({ confirmedResets_s: [30] });
    const ref = analyzeLog(own, settings, { sha256: 'x' });
    const log = prepareAnalysis(own, settings);
    const parts: StageParts = {};
    for (const name of ['channels', 'bias', 'resets', 'uwb', 'errors'] as const) runStage(name, own, log, settings, parts);
    const again = assembleReport(log, settings, { sha256: 'x' }, parts);
    expect(JSON.stringify(again.report)).toBe(JSON.stringify(ref.report));
    expect(again.series.map((s) => s.key)).toEqual(ref.series.map((s) => s.key));
    expect(() => assembleReport(log, settings, {}, { ...parts, errors: undefined })).toThrow(/missing: errors/);
  });
});

describe('errors stage in the worker', () => {
  it('gives the sequential report byte for byte, with the hash of the file', async () => {
    const seq = await analyzeFile(big);
    const par = await analyzeFile(big, parallel());
    expect(reportProblems(par.report)).toEqual([]);
    expect(par.parallel?.errorsIn).toBe('worker');
    expect(par.parallel?.hashIn).toBe('worker');
    expect(par.report.time.epochs).toBeGreaterThanOrEqual(20_000);
    expect(par.report.errors).toBeDefined(); // the demo log carries ground truth: the stage has work to do
    expect(json(par)).toBe(json(seq));
    // Source: node:crypto over the whole file (the outside check of the worker's hash).
    expect(par.report.source.sha256).toBe(sha256(big));
    expect(par.series).toEqual([]); // report only: the caller said it needs no series
    expect(seq.series.some((s) => s.key.startsWith('error/'))).toBe(true);
  });

  it('with confirmed resets (--reset-at) the worker sees the same segments', async () => {
    const settings = { confirmedResets_s: [60.5] };
    const seq = await analyzeFile(big, { settings: { ...settings } });
    const par = await analyzeFile(big, { settings: { ...settings }, ...parallel() });
    expect(par.parallel?.errorsIn).toBe('worker');
    expect((par.report.errors as unknown as { segments: unknown[] }).segments.length).toBeGreaterThan(1);
    expect(json(par)).toBe(json(seq));
  });
});

describe('falls back to one thread with the same report', () => {
  it('a log with fewer epochs than the threshold: errors on the main thread, hash still in the worker', async () => {
    const seq = await analyzeFile(demoLog);
    const par = await analyzeFile(demoLog, parallel({ minBytes: 0 }));
    expect(par.parallel?.errorsIn).toBe('main');
    expect(par.parallel?.why).toMatch(/fewer than 20000/);
    expect(par.parallel?.hashIn).toBe('worker');
    expect(json(par)).toBe(json(seq));
    expect(par.report.source.sha256).toBe(sha256(demoLog));
  });

  it('a small file starts no worker', async () => {
    const par = await analyzeFile(demoLog, parallel());
    expect(par.parallel).toMatchObject({ errorsIn: 'main', hashIn: 'main', why: 'no stage worker' });
    expect(json(par)).toBe(json(await analyzeFile(demoLog)));
  });

  it('a missing worker file', async () => {
    const par = await analyzeFile(big, parallel({}, path.join(dir, 'no-such-worker.js')));
    expect(par.parallel).toMatchObject({ errorsIn: 'main', hashIn: 'main' });
    expect(json(par)).toBe(json(await analyzeFile(big)));
  });

  it('a worker that dies at start: hash and errors on the main thread', async () => {
    const broken = path.join(dir, 'broken-worker.js');
    writeFileSync(broken, "throw new Error('injected start failure');\n");
    const par = await analyzeFile(big, parallel({}, broken));
    expect(par.parallel?.errorsIn).toBe('main');
    expect(par.parallel?.hashIn).toBe('main');
    expect(par.parallel?.why).toMatch(/injected start failure|stopped/);
    expect(par.report.source.sha256).toBe(sha256(big));
    expect(json(par)).toBe(json(await analyzeFile(big)));
  });

  it('a worker that fails on the errors job: the stage runs on the main thread', async () => {
    // The real worker, whose message handler is replaced by one that throws (an uncaught error in the thread).
    const failing = path.join(dir, 'failing-worker.js');
    writeFileSync(failing, `const { parentPort } = require('node:worker_threads');
const on = parentPort.on.bind(parentPort);
parentPort.on = (event, fn) => on(event, event === 'message' ? () => { throw new Error('injected errors failure'); } : fn);
require(${JSON.stringify(workerFile)});
`);
    const par = await analyzeFile(big, parallel({}, failing));
    expect(par.parallel?.errorsIn).toBe('main');
    expect(par.parallel?.why).toMatch(/injected errors failure/);
    expect(par.parallel?.hashIn).toBe('worker');
    expect(json(par)).toBe(json(await analyzeFile(big)));
  });
});

describe('a stage worker that never answers: the watchdog stops it, the report is the same', () => {
  // The limits are injected (a floor of 50 ms, no multiple), so the watchdog fires as soon as the main thread's own
  // stages are done; the defaults would wait at least 10 s.
  const prompt = { answerFloorMs: 50, answerFactor: 0 };

  it('a worker that never answers anything (an endless loop at start): hash and errors on the main thread', async () => {
    const hung = path.join(dir, 'hung-worker.js');
    writeFileSync(hung, 'for (;;) { /* injected hang */ }\n');
    const par = await analyzeFile(big, parallel({ ...prompt }, hung));
    expect(par.parallel?.errorsIn).toBe('main');
    expect(par.parallel?.why).toMatch(/did not answer within 0\.050 s \(timed out\)/);
    expect(par.parallel?.hashIn).toBe('main');
    expect(par.parallel?.hashWhy).toMatch(/timed out/);
    expect(par.report.source.sha256).toBe(sha256(big)); // Source: node:crypto over the whole file.
    expect(json(par)).toBe(json(await analyzeFile(big)));
  });

  it('the real worker hanging in the errors job: the stage runs on the main thread', async () => {
    // The real worker (its hash answers), whose errors job never ends.
    const stuck = path.join(dir, 'stuck-worker.js');
    writeFileSync(stuck, `const { parentPort } = require('node:worker_threads');
const on = parentPort.on.bind(parentPort);
parentPort.on = (event, fn) => on(event, event === 'message' ? () => { for (;;) { /* injected hang */ } } : fn);
require(${JSON.stringify(workerFile)});
`);
    const par = await analyzeFile(big, parallel({ ...prompt }, stuck));
    expect(par.parallel?.errorsIn).toBe('main');
    expect(par.parallel?.why).toMatch(/the stage worker did not answer within .* \(timed out\) and was stopped/);
    expect(par.report.source.sha256).toBe(sha256(big)); // from the worker or, when it was stopped first, the main thread
    expect(json(par)).toBe(json(await analyzeFile(big)));
  });

  it('the limit: max(floor, multiple x the main thread\'s work)', () => {
    expect(answerLimitMs(300)).toBe(10_000); // the defaults: floor 10 s, 10 x the work
    expect(answerLimitMs(2_500)).toBe(25_000);
    expect(answerLimitMs(2_500, 50, 0)).toBe(50);
  });
});

describe('the hash is of the bytes analysed when the file changes during the read', () => {
  it('a file that grows during the read: hashed as far as it was read', async () => {
    const p = path.join(dir, 'growing.csv');
    copyFileSync(big, p);
    const tail = readFileSync(big, 'utf8').split('\n').slice(-40).join('\n'); // complete lines (the log ends with \n)
    let appended = false;
    const par = await analyzeFile(p, { ...parallel(), onProgress: () => { if (!appended) { appended = true; appendFileSync(p, tail); } } });
    expect(appended).toBe(true);
    expect(par.parallel?.hashIn).toBe('worker');
    expect(par.report.source.sha256).toBe(sha256(p)); // the main thread read the appended lines too
    expect(json(par)).toBe(json(await analyzeFile(p)));
  });

  it('a file replaced during the read is read again from the start (a note says so), hash of the new file', async () => {
    const p = path.join(dir, 'replaced.csv');
    copyFileSync(big, p);
    const next = path.join(dir, 'replaced.next');
    writeFileSync(next, [...generateWarehouseLog({ ...BENCH_OPTIONS, rows: EPOCHS, seed: 12 })].join(''));
    let swapped = false;
    const par = await analyzeFile(p, { ...parallel(), onProgress: () => { if (!swapped) { swapped = true; renameSync(next, p); } } });
    expect(swapped).toBe(true);
    expect(par.report.source.sha256).toBe(sha256(p));
    expect(par.report.findings.some((f) => f.kind === 'note' && /replaced by another file/.test(f.message))).toBe(true);
    expect(par.parallel?.why).toBe('the log was read again');
  });

  it('a file rewritten in place during the read (same inode and length) is read again, hash and report of the new bytes', async () => {
    const p = path.join(dir, 'inplace.csv');
    copyFileSync(big, p);
    const next = shiftedPositions(readFileSync(big, 'utf8'));
    expect(Buffer.byteLength(next)).toBe(readFileSync(big).length);
    ageFile(p);
    let rewritten = false;
    const par = await analyzeFile(p, { ...parallel(), onProgress: () => { if (!rewritten) { rewritten = true; rewriteInPlace(p, next); } } });
    expect(rewritten).toBe(true);
    expect(readFileSync(p, 'utf8')).toBe(next);
    expect(par.report.source.sha256).toBe(sha256(p)); // Source: node:crypto over the file as rewritten.
    expect(par.report.findings.some((f) => f.kind === 'note' && /rewritten in place while it was being read \(.*\); it was read again/.test(f.message))).toBe(true);
    expect(par.parallel?.why).toBe('the log was read again');
    // The report of the new bytes: the sequential analysis of the file as it is now, plus the note.
    const seq = await analyzeFile(p);
    expect(seq.report.errors).not.toEqual((await analyzeFile(big)).report.errors); // the new bytes give another report
    expect(par.report.errors).toEqual(seq.report.errors);
    expect(par.report.findings.filter((f) => f.kind !== 'note')).toEqual(seq.report.findings.filter((f) => f.kind !== 'note'));
  });

  it('a rewrite only the worker sees (its fstat after the hash: times moved, no growth) makes analyzeFile read again', async () => {
    // The real worker, whose hash answer reports the file's modification time moved (as after a rewrite in place
    // between the main thread's last look and the end of the hash): the plumbing from that answer to the read again.
    const moved = path.join(dir, 'moved-worker.js');
    writeFileSync(moved, `const { parentPort } = require('node:worker_threads');
const post = parentPort.postMessage.bind(parentPort);
parentPort.postMessage = (m) => post(m && m.type === 'hash' && m.answer.kind === 'hash'
  ? { ...m, answer: { ...m.answer, stamp: { ...m.answer.stamp, mtimeMs: m.answer.stamp.mtimeMs + 1 } } } : m);
require(${JSON.stringify(workerFile)});
`);
    const par = await analyzeFile(big, parallel({}, moved));
    expect(par.report.findings.some((f) => f.kind === 'note' && /rewritten in place while it was being read \(.*\); it was read again/.test(f.message))).toBe(true);
    expect(par.report.source.sha256).toBe(sha256(big));
  });

  it('a change only the worker sees (its answer says replaced) makes analyzeFile read again', async () => {
    // A stand-in worker that answers every hash with "replaced": the plumbing from the answer to the read again.
    const liar = path.join(dir, 'liar-worker.js');
    writeFileSync(liar, `const { parentPort } = require('node:worker_threads');
parentPort.postMessage({ type: 'hash', answer: { kind: 'changed', how: 'replaced', message: 'injected: replaced by another file' } });
parentPort.on('message', () => undefined);
`);
    const par = await analyzeFile(big, parallel({}, liar));
    expect(par.report.findings.some((f) => f.kind === 'note' && /injected: replaced by another file; it was read again/.test(f.message))).toBe(true);
    expect(par.report.source.sha256).toBe(sha256(big));
  });
});

describe('prefixHash', () => {
  it('hashes exactly the bytes published, not what the file grew to', () => {
    const p = path.join(dir, 'prefix.bin');
    const bytes = Buffer.alloc(3_500_000);
    for (let i = 0; i < bytes.length; i++) bytes[i] = (i * 7919) & 0xff;
    writeFileSync(p, bytes);
    const n = 2_345_678;
    const answer = hashPrefixNow(p, n, undefined);
    // Source: node:crypto over the same prefix.
    expect(answer).toMatchObject({ kind: 'hash', bytes: n, sha256: createHash('sha256').update(bytes.subarray(0, n)).digest('hex') });
  });

  it('a file shorter than the bytes read is truncated; another inode is replaced; a missing file deleted', () => {
    const p = path.join(dir, 'short.bin');
    writeFileSync(p, Buffer.alloc(1000, 1));
    expect(hashPrefixNow(p, 5000, undefined)).toMatchObject({ kind: 'changed', how: 'truncated' });
    const h = new PrefixHasher(p);
    const id = h.identity;
    h.close();
    expect(hashPrefixNow(p, 1000, id).kind).toBe('hash');
    expect(hashPrefixNow(p, 1000, { dev: id.dev, ino: id.ino + 1 })).toMatchObject({ kind: 'changed', how: 'replaced' });
    expect(checkIdentity({ kind: 'abandoned' }, p, id)).toEqual({ kind: 'abandoned' });
    expect(hashPrefixNow(path.join(dir, 'gone.bin'), 10, undefined)).toMatchObject({ kind: 'changed', how: 'deleted' });
  });

  it('the hasher\'s stamp (fstat of its descriptor) tells a rewrite in place from an append', () => {
    const p = path.join(dir, 'stamp.bin');
    writeFileSync(p, Buffer.alloc(4096, 1));
    ageFile(p);
    const h = new PrefixHasher(p);
    try {
      const opened = h.stamp();
      expect(rewrittenSince(opened, h.stamp())).toBe(false); // nothing written
      appendFileSync(p, Buffer.alloc(100, 2));
      const grown = h.stamp();
      expect(grown.size).toBe(4196);
      expect(rewrittenSince(opened, grown)).toBe(false); // grew: an append, not a change
      ageFile(p);
      const aged = h.stamp();
      rewriteInPlace(p, Buffer.alloc(10, 3));
      const after = h.stamp();
      expect(after.size).toBe(4196);
      expect(rewrittenSince(aged, after)).toBe(true); // same size, times moved: rewritten in place
    } finally {
      h.close();
    }
  });

  it('an abandoned handshake stops the hasher', () => {
    const p = path.join(dir, 'abandon.bin');
    writeFileSync(p, Buffer.alloc(10, 2));
    const progress = new HashProgress();
    progress.publish(5);
    progress.abandon();
    expect(hashWhileRead(p, progress.buffer)).toEqual({ kind: 'abandoned' });
  });
});

describe('the command line', () => {
  it('analyze --profile runs errors in the worker and writes the sequential report', async () => {
    const out = path.join(dir, 'cli.json');
    const r = spawnSync(process.execPath, [path.join(root, 'dist', 'cli.js'), 'analyze', big, '--out', out, '--profile'], { encoding: 'utf8' });
    expect(r.status).toBe(0);
    expect(r.stderr).toMatch(/^profile: .*errors=[\d.]+ms/m);
    expect(r.stderr).toMatch(/^parallel: errors ran in the stage worker/m);
    const seq = await analyzeFile(big);
    // --out writes JSON.stringify(report, null, 2) + newline (cli/export.ts)
    expect(readFileSync(out, 'utf8')).toBe(json(seq) + '\n');
  });
});

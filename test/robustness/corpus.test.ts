/**
 * The corpus of bad logs (test/fixtures/bad, made by scripts/fuzz/make-bad-corpus.mjs, described in its README):
 * the readers never throw, every diagnostic names the file, an in-range line and says what is wrong in a short plain
 * sentence, and reading in 7-byte chunks gives the same result as reading in one piece. Where the damage is on a
 * known line, a diagnostic must name that line; where the file is readable, the values must come out right
 * (oracle for numbers: ECMAScript `Number()`).
 */
import { describe, expect, it } from 'vitest';
import { readFileSync, readdirSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { ensureBundle } from '../../scripts/bench/bundle.mjs';
import { resolve } from 'node:path';
import type { NavLog } from '../../extension/core/model';
import { parseAnchorsText, parseMapping, readRun } from '../../extension/core/read/index';
import { byteSource, diagnosticProblem, fingerprint, lineCount, logProblem } from '../../scripts/fuzz/properties';

const DIR = resolve(__dirname, '../fixtures/bad');
const ROOT = resolve(__dirname, '../..');
const bytesOf = (name: string): Uint8Array => new Uint8Array(readFileSync(resolve(DIR, name)));

async function read(name: string, bytes: Uint8Array = bytesOf(name), chunks: number[] = []): Promise<NavLog> {
  return readRun(byteSource(name, bytes, chunks));
}

/** Lines named by diagnostics. */
const lines = (log: NavLog): number[] => log.diagnostics.map((d) => d.line);
const col = (log: NavLog, name: string): number[] => Array.from(log.state.columns.get(name) ?? []).slice(0, log.state.length);
const times = (log: NavLog): number[] => Array.from(log.state.t_s.subarray(0, log.state.length));

/** Inputs that have killed the reader's process (fatal V8 errors cannot be caught): read in a child process only. */
const ISOLATED = ['huge-component-index.csv', 'component-index-overflow.csv'];
const LOGS = readdirSync(DIR).filter((f) => /\.(csv|jsonl|json)$/.test(f) && !f.includes('anchors') && !f.endsWith('.map.json') && !ISOLATED.includes(f));

/** What scripts/fuzz/read-one.ts prints. */
interface Isolated { rows: number; state: number; channels: [string, number, number][]; pX: number[]; diagnostics: { line: number; severity: string; message: string }[] }

/** Read a file in a child process (bundled on demand); the exit status and stderr say how it ended. */
async function readIsolated(name: string): Promise<{ status: number | null; signal: string | null; stderr: string; out?: Isolated }> {
  const bundle = await ensureBundle('scripts/fuzz/read-one.ts', 'bench-output/.tools/read-one.js', ['extension/core', 'scripts/fuzz']);
  const r = spawnSync(process.execPath, [resolve(ROOT, bundle), resolve(DIR, name)], { cwd: ROOT, encoding: 'utf8', timeout: 50_000 });
  return { status: r.status, signal: r.signal, stderr: (r.stderr ?? '').slice(0, 300), out: r.status === 0 ? JSON.parse(r.stdout) as Isolated : undefined };
}

describe('bad-log corpus: every file', () => {
  it('has the files the README lists', () => {
    const readme = readFileSync(resolve(DIR, 'README.md'), 'utf8');
    for (const f of readdirSync(DIR)) if (f !== 'README.md') expect(readme).toContain(`\`${f}\``);
    expect(LOGS.length).toBeGreaterThan(25);
  });

  it.each(LOGS)('%s: never throws, diagnostics are well formed, chunking changes nothing', async (name) => {
    const bytes = bytesOf(name);
    const whole = await read(name, bytes);
    expect(logProblem(whole, [name, ...whole.files], lineCount(bytes))).toBeUndefined();
    const split = await read(name, bytes, [7]);
    expect(fingerprint(split)).toBe(fingerprint(whole));
  });
});

describe('bad-log corpus: what each file must give', () => {
  it('truncated.csv: the 5 whole rows, and a diagnostic on the cut line 7', async () => {
    const log = await read('truncated.csv');
    expect(log.state.length).toBeGreaterThanOrEqual(5);
    expect(times(log).slice(0, 5)).toEqual([0, 0.01, 0.02, 0.03, 0.04]);
    expect(lines(log)).toContain(7);
  });

  it('no-final-newline.csv: all 6 rows, the last one included', async () => {
    const log = await read('no-final-newline.csv');
    expect(log.state.length).toBe(6);
    expect(col(log, 'p_x')[5]).toBe(1.5);
    expect(log.diagnostics.filter((d) => d.severity === 'error')).toEqual([]);
  });

  it('mixed-line-endings.csv: LF, CRLF and CR each end one line', async () => {
    const log = await read('mixed-line-endings.csv');
    expect(times(log)).toEqual([0, 0.01, 0.02, 0.03, 0.04]);
    expect(Array.from(log.state.line.subarray(0, 5))).toEqual([2, 3, 4, 5, 6]);
  });

  it('bom-utf8.csv: the leading BOM is dropped (t is the time column); the stray one on line 5 is named', async () => {
    const log = await read('bom-utf8.csv');
    expect(times(log).slice(0, 3)).toEqual([0, 0.01, 0.02]);
    expect(col(log, 'p_x').slice(0, 3)).toEqual([1, 1.1, 1.2]);
    const line5 = log.state.length >= 4 && log.state.line[3] === 5 && log.state.t_s[3] === 0.03;
    expect(line5 || lines(log).includes(5)).toBe(true);
  });

  it('bom-utf16le.csv: not UTF-8, and a message says so (or it is decoded correctly)', async () => {
    const log = await read('bom-utf16le.csv');
    const decoded = log.state.length === 3 && times(log).join() === '0,0.01,0.02';
    expect(decoded || log.diagnostics.some((d) => d.severity !== 'info' && /UTF-?16|encoding|UTF-?8|binary/i.test(d.message))).toBe(true);
  });

  it('bom-utf8.jsonl: BOM dropped, both records read', async () => {
    const log = await read('bom-utf8.jsonl');
    expect(times(log)).toEqual([0, 0.01]);
  });

  it('quoted.csv: quoted separators, quotes and line breaks; lines are where records start; the open quote is named', async () => {
    const log = await read('quoted.csv');
    const t = times(log);
    expect(t.slice(0, 5)).toEqual([0, 0.01, 0.02, 0.03, 0.04]);
    expect(Array.from(log.state.line.subarray(0, 5))).toEqual([2, 3, 4, 6, 7]);
    expect(col(log, 'p_x').slice(0, 5)).toEqual([1, 1.1, 1.2, 1.3, 1.4]);
    expect(lines(log).some((l) => l >= 8)).toBe(true);
  });

  it('ragged.csv: the short row (line 3) and the long row (line 5) are named; whole rows are kept', async () => {
    const log = await read('ragged.csv');
    expect(lines(log)).toContain(3);
    expect(lines(log)).toContain(5);
    expect(times(log)).toContain(0.05);
  });

  it('duplicate-headers.csv: the repeated names are named on line 1', async () => {
    const log = await read('duplicate-headers.csv');
    expect(log.diagnostics.some((d) => d.line === 1 && /p_x|nu_tdoa|twice|duplicate|more than once|repeated/i.test(d.message))).toBe(true);
  });

  it('non-numeric.csv: each bad cell is named on its line', async () => {
    const log = await read('non-numeric.csv');
    for (const l of [3, 4, 5, 6, 8]) expect(lines(log)).toContain(l);
    expect(col(log, 'p_x')[0]).toBe(1);
  });

  it('extreme-numbers.csv: doubles read exactly at the edges of the range; overflow is a bad value on line 3', async () => {
    const log = await read('extreme-numbers.csv');
    const px = col(log, 'p_x'), py = col(log, 'p_y'), pz = col(log, 'p_z');
    expect(px[0]).toBe(Number('1.7976931348623157e308'));
    expect(py[0]).toBe(Number('2.2250738585072014e-308'));
    expect(pz[0]).toBe(Number('4.9e-324'));
    expect(lines(log)).toContain(3);
    const row = times(log).indexOf(0.02);
    expect(px[row]).toBe(Number('123456789012345678901234567890'));
    expect(py[row]).toBe(Number('0.000000000000000000000000000001'));
    const r4 = times(log).indexOf(0.04);
    expect(px[r4]).toBe(Number('9007199254740993'));
    expect(py[r4]).toBe(0.30000000000000004);
    expect(pz[r4]).toBe(1.0000000000000002);
  });

  it('nan-inf.csv: nan spellings are missing values (line 2 is clean); infinities are bad values (4, 5); odd spellings (6) and NaN time (8) are named', async () => {
    const log = await read('nan-inf.csv');
    expect(lines(log)).not.toContain(2);
    for (const l of [4, 5, 6, 8]) expect(lines(log)).toContain(l);
    expect(log.diagnostics.filter((d) => d.line === 4).every((d) => d.kind === 'bad-value')).toBe(true);
    // rows without any state value carry only their TDOA update
    const tdoa = log.channels.find((c) => c.name === 'tdoa');
    expect(tdoa?.length).toBe(5); // lines 2 to 6; line 8 has no time
  });

  it.each(['binary-garbage.csv', 'binary-garbage.jsonl'])('%s: garbage gives diagnostics, not data', async (name) => {
    const log = await read(name);
    expect(log.diagnostics.length).toBeGreaterThan(0);
    expect(log.state.length).toBe(0);
  });

  it('garbage-after-header.csv: the rows before and after the garbage survive', async () => {
    const log = await read('garbage-after-header.csv');
    expect(times(log)).toContain(0);
    expect(times(log)).toContain(0.02);
    expect(log.diagnostics.length).toBeGreaterThan(0);
  });

  it('invalid-utf8.csv: the rows are read and the bad bytes named', async () => {
    const log = await read('invalid-utf8.csv');
    expect(times(log)[0]).toBe(0);
    expect(log.diagnostics.length).toBeGreaterThan(0);
  });

  it('deeply-nested.json: a diagnostic on line 1, no stack overflow', async () => {
    const log = await read('deeply-nested.json');
    expect(lines(log)).toContain(1);
    expect(log.state.length).toBe(0);
  });

  it('deeply-nested.jsonl: line 2 named, the records on lines 1 and 3 kept', async () => {
    const log = await read('deeply-nested.jsonl');
    expect(lines(log)).toContain(2);
    expect(times(log)).toEqual([0, 0.02]);
  });

  it('truncated.json: the cut is named; the whole record before it is kept', async () => {
    const log = await read('truncated.json');
    expect(log.diagnostics.some((d) => d.severity === 'error' && d.line >= 3)).toBe(true);
    expect(times(log)[0]).toBe(0);
  });

  it('broken-line.jsonl: lines 2 and 4 named, lines 1 and 3 read', async () => {
    const log = await read('broken-line.jsonl');
    expect(lines(log)).toContain(2);
    expect(lines(log)).toContain(4);
    expect(times(log)).toEqual([0, 0.02]);
  });

  it('scalar.json: the wrong shape is named on line 1', async () => {
    const log = await read('scalar.json');
    expect(log.diagnostics.some((d) => d.line === 1 && d.severity === 'error')).toBe(true);
  });

  it('records-not-array.json: says that there are no records, and does not claim "records" is not "records"', async () => {
    const log = await read('records-not-array.json');
    expect(log.diagnostics.some((d) => d.severity !== 'info')).toBe(true);
    expect(log.diagnostics.filter((d) => /"records" is not "meta" or "records"/.test(d.message))).toEqual([]);
  });

  it('wrong-shapes.jsonl: bad time, short vector, object vector, mismatched S, non-objects and the trailing comma are named on their lines', async () => {
    const log = await read('wrong-shapes.jsonl');
    for (const l of [1, 2, 3, 4, 7, 8, 10]) expect(lines(log)).toContain(l);
  });

  it.each(['empty.csv', 'empty.jsonl', 'empty.json', 'header-only.csv', 'metadata-only.csv', 'blank-lines.csv'])('%s: says there is no data', async (name) => {
    const log = await read(name);
    expect(log.state.length).toBe(0);
    expect(log.diagnostics.length).toBeGreaterThan(0);
  });

  it('empty-header-names.csv: empty names become col_N and the rows are read', async () => {
    const log = await read('empty-header-names.csv');
    expect(times(log)).toEqual([0, 0.01]);
    expect(col(log, 'p_y')).toEqual([2, 2]);
  });

  it('bad-metadata.csv: the bad frame and anchor lines are named; the data row is read', async () => {
    const log = await read('bad-metadata.csv');
    expect(lines(log).some((l) => l >= 1 && l <= 2)).toBe(true);
    expect(times(log)).toEqual([0]);
    expect(log.anchors.every((a) => a.p.every(Number.isFinite))).toBe(true);
  });

  it('time-backwards.csv: time going backwards is named at line 4', async () => {
    const log = await read('time-backwards.csv');
    expect(log.diagnostics.some((d) => d.kind === 'time-backwards' && d.line === 4)).toBe(true);
  });

  it('huge-component-index.csv (own process): an absurd component index does not make a 301-component channel; line 1 says why', async () => {
    const r = await readIsolated('huge-component-index.csv');
    expect({ status: r.status, signal: r.signal, stderr: r.stderr }).toEqual({ status: 0, signal: null, stderr: '' });
    expect(r.out!.channels.every(([, dof]) => dof <= 100)).toBe(true);
    expect(r.out!.diagnostics.some((d) => d.line === 1 && /300/.test(d.message))).toBe(true);
    expect(r.out!.pX).toEqual([1, 1.1]);
  });

  it('component-index-overflow.csv (own process): an index beyond any array length neither kills nor throws; line 1 says why', async () => {
    const r = await readIsolated('component-index-overflow.csv');
    expect({ status: r.status, signal: r.signal, stderr: r.stderr }).toEqual({ status: 0, signal: null, stderr: '' });
    expect(r.out!.diagnostics.some((d) => d.line === 1)).toBe(true);
    expect(r.out!.pX).toEqual([1, 1.1]);
  });

  it('decimal-comma.csv: semicolon-separated decimal commas read as numbers, or each named', async () => {
    const log = await read('decimal-comma.csv');
    const ok = col(log, 'p_x').join() === '1.5,1.6';
    expect(ok || log.diagnostics.some((d) => d.line === 2)).toBe(true);
  });
});

describe('bad-log corpus: mapping and anchors files', () => {
  it('bad.map.json: parseMapping never throws and names the mapping file with a line', () => {
    const text = readFileSync(resolve(DIR, 'bad.map.json'), 'utf8');
    const r = parseMapping(text, 'bad.map.json');
    expect(r.diagnostics.length).toBeGreaterThan(0);
    for (const d of r.diagnostics) expect(diagnosticProblem(d, ['bad.map.json'], lineCount(bytesOf('bad.map.json')))).toBeUndefined();
  });

  it('bad.map.json applied to a log: the log is still read', async () => {
    const text = readFileSync(resolve(DIR, 'bad.map.json'), 'utf8');
    const log = await readRun(byteSource('no-final-newline.csv', bytesOf('no-final-newline.csv')), { map: { text, name: 'bad.map.json' } });
    expect(log.diagnostics.some((d) => d.file === 'bad.map.json')).toBe(true);
    expect(logProblem(log, ['no-final-newline.csv', 'bad.map.json', ...log.files], 8)).toBeUndefined();
  });

  it('bad-anchors.csv: lines 3, 4, 5 and 6 named; anchors 0 kept once with its first position', () => {
    const text = readFileSync(resolve(DIR, 'bad-anchors.csv'), 'utf8');
    const r = parseAnchorsText(text, 'bad-anchors.csv');
    for (const l of [3, 4, 5, 6]) expect(r.diagnostics.map((d) => d.line)).toContain(l);
    expect(r.anchors.filter((a) => a.id === '0')).toEqual([{ id: '0', p: [1, 2, 3] }]);
    for (const d of r.diagnostics) expect(diagnosticProblem(d, ['bad-anchors.csv'], 7)).toBeUndefined();
  });

  it('bad-anchors.json: only the good anchor is kept, the rest named', () => {
    const text = readFileSync(resolve(DIR, 'bad-anchors.json'), 'utf8');
    const r = parseAnchorsText(text, 'bad-anchors.json');
    expect(r.anchors).toEqual([{ id: '0', p: [1, 2, 3] }]);
    expect(r.diagnostics.length).toBeGreaterThanOrEqual(3);
    for (const d of r.diagnostics) expect(diagnosticProblem(d, ['bad-anchors.json'], 2)).toBeUndefined();
  });
});

describe('bad-log corpus: 10 MB single lines (made here, never committed)', () => {
  const MB10 = 10 * 1024 * 1024;
  it('a CSV row with a 10 MB cell: the rows around it are read; messages stay short', async () => {
    const text = 't,p_x,p_y,p_z,note\n0,1,2,3,' + 'x'.repeat(MB10) + '\n0.01,1.1,2,3,ok\n';
    const bytes = new TextEncoder().encode(text);
    const log = await read('long-cell.csv', bytes);
    expect(logProblem(log, ['long-cell.csv'], 4)).toBeUndefined();
    expect(times(log)).toContain(0.01);
  });

  it('a CSV whose only line is 10 MB of digits without a newline', async () => {
    const bytes = new TextEncoder().encode('1'.repeat(MB10));
    const log = await read('one-line.csv', bytes);
    expect(logProblem(log, ['one-line.csv'], 1)).toBeUndefined();
    expect(log.diagnostics.length).toBeGreaterThan(0);
  });

  it('a JSON Lines record with a 10 MB string, between two good ones', async () => {
    const text = '{"kind":"state","t":0,"p":[1,2,3]}\n{"kind":"state","t":0.01,"note":"' + 'y'.repeat(MB10) + '","p":[1,2,3]}\n{"kind":"state","t":0.02,"p":[1,2,3]}\n';
    const log = await read('long.jsonl', new TextEncoder().encode(text));
    expect(logProblem(log, ['long.jsonl'], 4)).toBeUndefined();
    expect(times(log)).toContain(0.02);
  });

  it('a JSON Lines line of 10 MB of garbage', async () => {
    const text = '{"kind":"state","t":0,"p":[1,2,3]}\n' + '{'.repeat(MB10) + '\n{"kind":"state","t":0.02,"p":[1,2,3]}\n';
    const log = await read('garbage.jsonl', new TextEncoder().encode(text));
    expect(logProblem(log, ['garbage.jsonl'], 4)).toBeUndefined();
    expect(lines(log)).toContain(2);
    expect(times(log)).toEqual([0, 0.02]);
  });
});

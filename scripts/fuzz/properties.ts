/**
 * Seeded property tests of the readers (CSV, JSON Lines, JSON, mapping, anchors, notes sidecar) (fast-check), shared by `npm run fuzz` (scripts/fuzz.mjs, 100,000+ cases) and
 * test/robustness/fuzz.test.ts (a few thousand cases in `npm test`).
 *
 * Inputs come from small grammars of what estimator logs look like (canonical and junk names, numbers in many
 * spellings, NaN and infinity words, quotes, metadata, three line endings, BOMs), then are damaged at the byte level
 * (truncated, bytes inserted, ranges deleted or repeated) and fed to the reader in random chunk sizes.
 * Properties: the reader never throws; every diagnostic names a file, an in-range 1-based line and a short plain
 * sentence; the run is well formed; the result does not depend on how the bytes were chunked; clean tables read back
 * exactly (oracle: ECMAScript `Number()`), and anchors too.
 */
import fc from 'fast-check';
import type { Diagnostic, NavLog } from '../../extension/core/model';
import { readRun, type ByteSource } from '../../extension/core/read/index';
import { parseMapping } from '../../extension/core/read/mapping';
import { parseAnchorsText } from '../../extension/core/read/anchors';
import { parseNotes, serializeNotes, type Note } from '../../extension/core/notes/sidecar';

const encoder = new TextEncoder();

/** A byte source over `bytes`, cut into chunks of the given sizes (cycled; the default is one chunk). */
export function byteSource(name: string, bytes: Uint8Array, chunkSizes: number[] = []): ByteSource {
  return {
    name,
    size: bytes.byteLength,
    async *chunks() {
      if (chunkSizes.length === 0) {
        yield bytes;
        return;
      }
      let off = 0;
      let k = 0;
      while (off < bytes.byteLength) {
        const n = Math.max(1, chunkSizes[k++ % chunkSizes.length]);
        yield bytes.subarray(off, off + n);
        off += n;
      }
    },
  };
}

/** Number of lines of a text as the log conventions count them (LF, CRLF and CR each end one). */
export function lineCount(bytes: Uint8Array): number {
  let n = 1;
  for (let i = 0; i < bytes.length; i++) {
    if (bytes[i] === 10) n++;
    else if (bytes[i] === 13) {
      n++;
      if (bytes[i + 1] === 10) i++;
    }
  }
  return n;
}

/** The first thing wrong with a diagnostic, or undefined when it is well formed. */
export function diagnosticProblem(d: Diagnostic, files: string[], maxLine: number): string | undefined {
  if (!files.includes(d.file)) return `diagnostic names file '${d.file}', not one of ${files.join(', ')}`;
  if (!Number.isInteger(d.line) || d.line < 0) return `diagnostic line ${d.line} is not a line number`;
  if (d.line > maxLine) return `diagnostic line ${d.line} is beyond the ${maxLine} lines of the input`;
  if (d.column !== undefined && (!Number.isInteger(d.column) || d.column < 1)) return `diagnostic column ${d.column} is not a column`;
  if (!['error', 'warning', 'info'].includes(d.severity)) return `diagnostic severity '${d.severity}'`;
  const m = d.message;
  if (typeof m !== 'string' || m.trim().length < 8 || !/\s/.test(m.trim())) return `diagnostic message '${m}' is not a sentence`;
  if (m.length > 600) return `diagnostic message is ${m.length} characters long`;
  if (/undefined|\[object |\n\s+at /.test(m)) return `diagnostic message leaks internals: '${m.slice(0, 120)}'`;
  return undefined;
}

/** The first structural problem of a read run, or undefined. */
export function logProblem(log: NavLog, files: string[], maxLine: number): string | undefined {
  for (const d of log.diagnostics) {
    const p = diagnosticProblem(d, files, maxLine);
    if (p) return `${p} (message: ${d.message})`;
  }
  const s = log.state;
  if (!Number.isInteger(s.length) || s.length < 0 || s.t_s.length < s.length || s.line.length < s.length) return 'state length does not fit its arrays';
  if (!Number.isInteger(log.rows) || log.rows < s.length) return `rows ${log.rows} is smaller than the ${s.length} state records`;
  for (const [name, col] of s.columns) if (col.length < s.length) return `state column ${name} is shorter than the stream`;
  for (let i = 0; i < s.length; i++) {
    const l = s.line[i];
    if (!Number.isInteger(l) || l < 1 || l > maxLine) return `state record ${i} has line ${l}`;
  }
  for (const c of log.channels) {
    if (!Number.isInteger(c.dof) || c.dof < 1) return `channel ${c.name} has dof ${c.dof}`;
    if (c.nu.length < c.length * c.dof) return `channel ${c.name} innovations are too short`;
    if (c.S && c.S.length < c.length * c.dof * c.dof) return `channel ${c.name} covariances are too short`;
    if (c.rejected.length < c.length || c.id.length < c.length) return `channel ${c.name} arrays are too short`;
    for (let i = 0; i < c.length; i++) {
      const id = c.id[i];
      if (!Number.isNaN(id) && (!Number.isInteger(id) || id < 0 || id >= c.ids.length)) return `channel ${c.name} id index ${id} is outside its dictionary`;
    }
  }
  for (const a of log.anchors) if (!a.p.every(Number.isFinite)) return `anchor ${a.id} has a non-finite position`;
  return undefined;
}

function arr(a: ArrayLike<number>, n: number): (number | string)[] {
  const out: (number | string)[] = [];
  for (let i = 0; i < n; i++) out.push(Number.isNaN(a[i]) ? 'NaN' : a[i]);
  return out;
}

/** A comparable digest of everything a reader produced (used to check that chunking changes nothing). */
export function fingerprint(log: NavLog): string {
  const s = log.state;
  return JSON.stringify({
    rows: log.rows, meta: log.meta, frame: log.frame, n: s.length, t: arr(s.t_s, s.length), line: arr(s.line, s.length),
    cols: [...s.columns].map(([k, v]) => [k, arr(v, s.length)]),
    channels: log.channels.map((c) => [c.name, c.dof, c.length, arr(c.nu, c.length * c.dof), c.S ? arr(c.S, c.length * c.dof * c.dof) : 0, arr(c.id, c.length), c.ids, Array.from(c.rejected.subarray(0, c.length))]),
    anchors: log.anchors, diags: log.diagnostics.map((d) => [d.severity, d.kind, d.line, d.column, d.message]),
    imu: log.imu?.length, tdoa: log.tdoa?.length, ranges: log.ranges?.length,
  });
}

// ---------------------------------------------------------------------------------------------- input grammars

const NAMES = [
  't', 'time', 'timestamp', 't_ms', 't_ns', 'stamp', 'p_x', 'p_y', 'p_z', 'px', 'pos_x', 'v_x', 'vel_y', 'q_w', 'q_x', 'q_y', 'q_z',
  'qw', 'r_11', 'r_22', 'roll', 'yaw_deg', 'bg_x', 'ba_z', 'sigma_p_x', 'std_v_y', 'var_p_z', 'sigma_att_x', 'gt_p_x', 'true_q_w',
  'nu_tdoa', 's_tdoa', 'id_tdoa', 'rejected_tdoa', 'nis_gnss', 'nu_mag_0', 'nu_mag_1', 's_mag_0_0', 's_mag_0_1', 's_mag_1_1',
  'innov_vis_2', 'tdoa_i', 'tdoa_j', 'tdoa', 'range_id', 'range', 'range_3', 'gyro_x', 'acc_z', 'mag_y', 'reset', '', 'foo',
  'P.X', 'Q-W', ' t ', 'col_3', 'nu_tdoa_0', 's_tdoa_0_0', '"p,x"', 'ünïcode', 'nu_', 's__', '_', '0',
];

const numberText: fc.Arbitrary<string> = fc.oneof(
  fc.double({ noNaN: true, noDefaultInfinity: true }).map((v) => String(v)),
  fc.double({ min: -1e4, max: 1e4, noNaN: true }).chain((v) => fc.integer({ min: 0, max: 12 }).map((d) => v.toFixed(d))),
  fc.double({ noNaN: true, noDefaultInfinity: true }).chain((v) => fc.integer({ min: 0, max: 20 }).map((d) => v.toExponential(d))),
  fc.integer({ min: -1e6, max: 1e6 }).map(String),
  fc.bigInt({ min: -(10n ** 30n), max: 10n ** 30n }).map(String),
  fc.constantFrom('0', '-0', '.5', '5.', '+3', '1e', 'e5', '1e+', '1.2.3', '--1', '0x1F', '1_000', ' 1.5 ', '1,5', '１２',
    '1e309', '-1e309', '1e-400', '4.9e-324', '9007199254740993', '0.30000000000000004', '1.7976931348623157e308'),
);

const specialText = fc.constantFrom('', '', '', 'nan', '-nan', 'NaN', 'NAN', 'inf', '-inf', 'Infinity', '-Infinity', '+inf',
  'true', 'false', 'null', 'abc', '4-5', '0-7', '"quoted, cell"', '"multi\nline"', '"say ""hi"""', '"unterminated',
  '2026-12-01T10:00:00Z', '12:00:01.5', '#', ' ', '\t', '\u0000', '\ufeff');

const cellText: fc.Arbitrary<string> = fc.oneof({ weight: 6, arbitrary: numberText }, { weight: 3, arbitrary: specialText },
  { weight: 1, arbitrary: fc.string({ maxLength: 6 }) });

const metaLine = fc.oneof(
  fc.constantFrom('# frame: ENU', '# frame: NED', '# frame: upside', '# source: src/a.cpp:12', '# source: x', '#', '# :', '# anchor 3: 1 2 3',
    '# anchor 5: 1 two', '# anchor: 1 2 3', '#anchor 9:9 9 9'),
  fc.string({ maxLength: 20 }).map((s) => `# ${s}`),
);

const eol = fc.constantFrom('\n', '\n', '\n', '\r\n', '\r');

/** Damage bytes the way broken files are damaged. */
const damaged = (bytes: Uint8Array): fc.Arbitrary<Uint8Array> => fc.oneof(
  { weight: 4, arbitrary: fc.constant(bytes) },
  { weight: 1, arbitrary: fc.nat({ max: Math.max(0, bytes.length) }).map((n) => bytes.subarray(0, n)) },
  { weight: 1, arbitrary: fc.tuple(fc.nat({ max: bytes.length }), fc.uint8Array({ minLength: 1, maxLength: 12 })).map(([at, ins]) => concat(bytes.subarray(0, at), ins, bytes.subarray(at))) },
  { weight: 1, arbitrary: fc.tuple(fc.nat({ max: bytes.length }), fc.nat({ max: 40 })).map(([at, n]) => concat(bytes.subarray(0, at), bytes.subarray(Math.min(bytes.length, at + n)))) },
  { weight: 1, arbitrary: fc.tuple(fc.nat({ max: bytes.length }), fc.nat({ max: 40 })).map(([at, n]) => concat(bytes.subarray(0, at + n), bytes.subarray(at))) },
);

function concat(...parts: Uint8Array[]): Uint8Array {
  const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0));
  let off = 0;
  for (const p of parts) { out.set(p, off); off += p.length; }
  return out;
}

/** CSV-like logs: optional BOM and metadata, a header, ragged rows of cells, mixed line endings, then damage. */
export const csvBytes: fc.Arbitrary<Uint8Array> = fc.record({
  bom: fc.boolean(),
  meta: fc.array(metaLine, { maxLength: 3 }),
  delim: fc.constantFrom(',', ',', ',', ';', '\t'),
  header: fc.array(fc.constantFrom(...NAMES), { minLength: 1, maxLength: 10 }),
  rows: fc.array(fc.array(cellText, { maxLength: 11 }), { maxLength: 25 }),
  eols: fc.array(eol, { minLength: 1, maxLength: 4 }),
  finalEol: fc.boolean(),
}).map((r) => {
  const lines = [...r.meta, r.header.join(r.delim), ...r.rows.map((cells) => cells.join(r.delim))];
  let text = r.bom ? '\ufeff' : '';
  lines.forEach((l, i) => { text += l + (i < lines.length - 1 || r.finalEol ? r.eols[i % r.eols.length] : ''); });
  return encoder.encode(text);
}).chain(damaged);

/** A JSON number token, sometimes one of the non-standard tokens the conventions accept. */
const jsonNumber = fc.oneof({ weight: 8, arbitrary: fc.double({ noNaN: true, noDefaultInfinity: true }).map((v) => JSON.stringify(v)) },
  { weight: 1, arbitrary: fc.constantFrom('NaN', 'Infinity', '-Infinity', '1e999', '-0', '"1.5"', 'null', 'true') });
const vec = (n: number) => fc.array(jsonNumber, { minLength: Math.max(0, n - 1), maxLength: n + 1 }).map((a) => `[${a.join(',')}]`);
const jsonRecord: fc.Arbitrary<string> = fc.oneof(
  fc.tuple(jsonNumber, vec(3), vec(3), vec(4), vec(3), vec(3)).map(([t, p, v, q, sp, gp]) =>
    `{"kind":"state","t":${t},"p":${p},"v":${v},"q":${q},"sigma":{"p":${sp}},"gt":{"p":${gp}}}`),
  fc.tuple(jsonNumber, fc.constantFrom('tdoa', 'mag', 'gnss_vel', ''), fc.constantFrom('"4-5"', '"0-1"', '3', 'null'), fc.integer({ min: 0, max: 3 }), fc.boolean())
    .chain(([t, ch, id, dof, rej]) => fc.tuple(vec(dof), fc.array(vec(dof), { minLength: Math.max(0, dof - 1), maxLength: dof + 1 }))
      .map(([nu, S]) => `{"kind":"update","t":${t},"channel":"${ch}","id":${id},"nu":${nu},"S":[${S.join(',')}],"rejected":${rej}}`)),
  fc.tuple(jsonNumber, vec(3), vec(3)).map(([t, g, a]) => `{"kind":"imu","t":${t},"gyro":${g},"acc":${a}}`),
  fc.tuple(jsonNumber, jsonNumber).map(([t, d]) => `{"kind":"tdoa","t":${t},"i":"4","j":"5","d":${d}}`),
  fc.tuple(jsonNumber, jsonNumber).map(([t, r]) => `{"kind":"range","t":${t},"anchor":"5","r":${r}}`),
  fc.jsonValue({ maxDepth: 3 }).map((v) => JSON.stringify(v)),
  fc.string({ maxLength: 12 }),
);

/** JSON Lines logs, then damage. */
export const jsonlBytes: fc.Arbitrary<Uint8Array> = fc.tuple(fc.boolean(), fc.array(jsonRecord, { maxLength: 25 }), fc.array(eol, { minLength: 1, maxLength: 3 }))
  .map(([bom, recs, eols]) => encoder.encode((bom ? '\ufeff' : '') + recs.map((r, i) => r + eols[i % eols.length]).join('')))
  .chain(damaged);

/** JSON logs (an array of records or `{meta, records}`), then damage. */
export const jsonBytes: fc.Arbitrary<Uint8Array> = fc.tuple(fc.boolean(), fc.array(jsonRecord, { maxLength: 20 }), fc.dictionary(fc.constantFrom('frame', 'source', 'anchor 1', 'x'), fc.constantFrom('"ENU"', '"NED"', '"a.cpp:3"', '"1 2 3"', '3', 'null')))
  .map(([wrapped, recs, meta]) => {
    const body = `[\n${recs.join(',\n')}\n]`;
    const m = `{${Object.entries(meta).map(([k, v]) => `"${k}":${v}`).join(',')}}`;
    return encoder.encode(wrapped ? `{"meta":${m},"records":${body}}` : body);
  })
  .chain(damaged);

const ROLES = ['t', 'p_x', 'p_y', 'p_z', 'q_w', 'r_11', 'roll', 'sigma_p_x', 'var_v_x', 'gt_p_x', 'nu_tdoa_0', 's_tdoa_0_0', 'nis_tdoa',
  'id_tdoa', 'rejected_tdoa', 'gyro_x', 'acc_x', 'mag_x', 'tdoa_i', 'tdoa_j', 'tdoa', 'range_id', 'range', 'reset', 'anchor_x', 'ignore', 'warp', ''];
const UNITS = ['s', 'ms', 'us', 'ns', 'rad', 'deg', 'rad/s', 'deg/s', 'm/s^2', 'g', 'mg', 'm', 'cm', 'mm', 'km', 'm/s', 'km/h', '1', 'parsec'];

/** Mapping files: plausible objects with wrong parts, or any JSON, then damage. */
export const mappingText: fc.Arbitrary<string> = fc.oneof(
  { weight: 3, arbitrary: fc.record({
    columns: fc.dictionary(fc.constantFrom(...NAMES.filter((n) => n !== ''), '1', '2', '3', '99'),
      fc.oneof(fc.constantFrom(...ROLES), fc.record({ role: fc.constantFrom(...ROLES), unit: fc.constantFrom(...UNITS), scale: fc.double({ noNaN: true }), offset: fc.integer() }, { requiredKeys: ['role'] }))),
    time: fc.record({ unit: fc.constantFrom('s', 'ms', 'us', 'ns', 'h'), offset_s: fc.double({ noNaN: true }) }, { requiredKeys: [] }),
    frame: fc.constantFrom('ENU', 'NED', 'XYZ'),
    channels: fc.dictionary(fc.constantFrom('tdoa', 'mag', 'gnss'), fc.record({ dof: fc.integer({ min: -1, max: 4 }) }, { requiredKeys: [] })),
    anchors: fc.oneof(fc.constant('anchors.csv'), fc.constant([{ id: '0', p: [1, 2, 3] }]), fc.integer()),
    delimiter: fc.constantFrom(',', ';', '\t', 'xx'),
    skipRows: fc.integer({ min: -1, max: 5 }),
  }, { requiredKeys: [] }).map((o) => JSON.stringify(o)) },
  { weight: 1, arbitrary: fc.jsonValue({ maxDepth: 4 }).map((v) => JSON.stringify(v)) },
  { weight: 1, arbitrary: fc.string({ maxLength: 40 }) },
).chain((s) => damaged(encoder.encode(s)).map((b) => new TextDecoder().decode(b)));

/** Anchor files, CSV or JSON, then damage. */
export const anchorsText: fc.Arbitrary<string> = fc.oneof(
  fc.tuple(fc.boolean(), fc.array(fc.tuple(fc.constantFrom('0', '1', '5', 'A', '', '07'), cellText, cellText, cellText), { maxLength: 10 }))
    .map(([header, rows]) => (header ? 'id,x,y,z\n' : '') + rows.map((r) => r.join(',')).join('\n')),
  fc.array(fc.tuple(fc.constantFrom('"0"', '1', 'null', '"x"'), vec(3)), { maxLength: 8 }).map((a) => `[${a.map(([id, p]) => `{"id":${id},"p":${p}}`).join(',')}]`),
  fc.jsonValue({ maxDepth: 3 }).map((v) => JSON.stringify(v)),
).chain((s) => damaged(encoder.encode(s)).map((b) => new TextDecoder().decode(b)));

const chunking = fc.oneof(fc.constant<number[]>([]), fc.array(fc.integer({ min: 1, max: 64 }), { minLength: 1, maxLength: 5 }));

// ---------------------------------------------------------------------------------------------- properties

/** Observer of every read (the fuzz script records the case before it runs, so a fatal crash leaves it on disk). */
export interface CaseRecorder {
  before(name: string, bytes: Uint8Array, mapText?: string): void;
  after(name: string, bytes: Uint8Array, seconds: number): void;
}

let recorder: CaseRecorder | undefined;

/** Install (or remove) the case recorder. */
export function setCaseRecorder(r: CaseRecorder | undefined): void {
  recorder = r;
}

async function readChecked(name: string, bytes: Uint8Array, chunks: number[], map?: { text: string; name: string }): Promise<NavLog> {
  let log: NavLog;
  try {
    recorder?.before(name, bytes, map?.text);
    const t0 = performance.now();
    log = await readRun(byteSource(name, bytes, chunks), map ? { map } : {});
    recorder?.after(name, bytes, (performance.now() - t0) / 1000);
  } catch (e) {
    throw new Error(`readRun threw on ${name}: ${(e as Error).stack ?? String(e)}`);
  }
  const files = [name, ...(map ? [map.name] : []), ...log.files];
  const maxLine = Math.max(lineCount(bytes), map ? lineCount(encoder.encode(map.text)) : 0);
  const problem = logProblem(log, files, maxLine);
  if (problem) throw new Error(problem);
  return log;
}

/** One log format: reading never throws, is well formed, and does not depend on chunking. */
function robustRead(name: string, input: fc.Arbitrary<Uint8Array>) {
  return fc.asyncProperty(input, chunking, async (bytes, chunks) => {
    const whole = await readChecked(name, bytes, []);
    if (chunks.length > 0) {
      const split = await readChecked(name, bytes, chunks);
      const a = fingerprint(whole), b = fingerprint(split);
      if (a !== b) throw new Error(`chunks ${JSON.stringify(chunks)} change the result:\n${a.slice(0, 400)}\n${b.slice(0, 400)}`);
    }
  });
}

/** Clean numeric tables, written with random formatting, read back exactly (oracle: ECMAScript Number(); a negative sigma is missing). */
function csvRoundTrip() {
  const cols = ['p_x', 'p_y', 'p_z', 'v_x', 'sigma_p_x', 'gt_p_x'];
  const table = fc.record({
    n: fc.integer({ min: 1, max: 20 }),
    values: fc.array(fc.array(fc.double({ noNaN: true, noDefaultInfinity: true, min: -1e12, max: 1e12 }), { minLength: cols.length, maxLength: cols.length }), { minLength: 20, maxLength: 20 }),
    digits: fc.array(fc.integer({ min: -2, max: 17 }), { minLength: cols.length, maxLength: cols.length }),
    delim: fc.constantFrom(',', ';', '\t'),
    eol: fc.constantFrom('\n', '\r\n', '\r'),
    bom: fc.boolean(),
    finalEol: fc.boolean(),
  });
  return fc.asyncProperty(table, chunking, async (tb, chunks) => {
    const fmt = (v: number, d: number): string => (d === -2 ? String(v) : d === -1 ? v.toExponential() : Math.abs(v) < 1e9 ? v.toFixed(d) : String(v));
    const lines = [['t', ...cols].join(tb.delim)];
    const expected: number[][] = [];
    for (let i = 0; i < tb.n; i++) {
      const cells = tb.values[i].map((v, c) => fmt(v, tb.digits[c]));
      // a negative standard deviation is invalid and read as missing (with a diagnostic): the oracle says NaN
      expected.push(cells.map((cell, c) => (cols[c].startsWith('sigma_') && Number(cell) < 0 ? NaN : Number(cell))));
      lines.push([(i * 0.01).toFixed(2), ...cells].join(tb.delim));
    }
    const text = (tb.bom ? '\ufeff' : '') + lines.join(tb.eol) + (tb.finalEol ? tb.eol : '');
    const log = await readChecked('table.csv', encoder.encode(text), chunks);
    if (log.state.length !== tb.n) throw new Error(`read ${log.state.length} of ${tb.n} rows: ${log.diagnostics.map((d) => d.message).join(' | ')}`);
    cols.forEach((c, k) => {
      const col = log.state.columns.get(c);
      if (!col) throw new Error(`column ${c} missing`);
      for (let i = 0; i < tb.n; i++) {
        if (!Object.is(col[i], expected[i][k]) && !(col[i] === 0 && expected[i][k] === 0)) {
          throw new Error(`${c}[${i}]: read ${col[i]}, written ${lines[i + 1].split(tb.delim)[k + 1]} (= ${expected[i][k]})`);
        }
      }
    });
    for (let i = 0; i < tb.n; i++) if (log.state.line[i] !== i + 2) throw new Error(`row ${i} has line ${log.state.line[i]}, not ${i + 2}`);
  });
}

/** Mapping files never throw, alone or applied to a small log; diagnostics are well formed. */
function mappingProperty() {
  return fc.asyncProperty(mappingText, csvBytes, async (text, csv) => {
    let parsed: ReturnType<typeof parseMapping>;
    try {
      parsed = parseMapping(text, 'run.csv.map.json');
    } catch (e) {
      throw new Error(`parseMapping threw: ${(e as Error).stack}`);
    }
    const maxLine = lineCount(encoder.encode(text));
    for (const d of parsed.diagnostics) {
      const p = diagnosticProblem(d, ['run.csv.map.json'], maxLine);
      if (p) throw new Error(`${p} (message: ${d.message})`);
    }
    await readChecked('run.csv', csv, [], { text, name: 'run.csv.map.json' });
  });
}

/** Anchor files never throw; anchors are finite and unique; diagnostics are well formed. */
function anchorsProperty() {
  return fc.property(anchorsText, (text) => {
    const r = parseAnchorsText(text, 'anchors.csv');
    const maxLine = lineCount(encoder.encode(text));
    for (const d of r.diagnostics) {
      const p = diagnosticProblem(d, ['anchors.csv'], maxLine);
      if (p) throw new Error(`${p} (message: ${d.message})`);
    }
    const ids = new Set<string>();
    for (const a of r.anchors) {
      if (!a.p.every(Number.isFinite)) throw new Error(`anchor ${a.id} has a non-finite position`);
      if (ids.has(a.id)) throw new Error(`anchor ${a.id} twice`);
      ids.add(a.id);
    }
  });
}

/** Clean anchor tables read back exactly. */
function anchorsRoundTrip() {
  return fc.property(fc.array(fc.tuple(fc.double({ noNaN: true, noDefaultInfinity: true }), fc.double({ noNaN: true, noDefaultInfinity: true }), fc.double({ noNaN: true, noDefaultInfinity: true })), { maxLength: 12 }), (ps) => {
    const text = 'id,x,y,z\n' + ps.map((p, i) => `${i},${p.join(',')}\n`).join('');
    const r = parseAnchorsText(text, 'anchors.csv');
    if (r.anchors.length !== ps.length) throw new Error(`read ${r.anchors.length} of ${ps.length} anchors: ${r.diagnostics.map((d) => d.message).join(' | ')}`);
    r.anchors.forEach((a, i) => {
      if (a.id !== String(i)) throw new Error(`anchor ${i} read as id ${a.id}`);
      for (let c = 0; c < 3; c++) if (a.p[c] !== ps[i][c] && !(a.p[c] === 0 && ps[i][c] === 0)) throw new Error(`anchor ${i}[${c}] read ${a.p[c]}, written ${ps[i][c]}`);
    });
  });
}

/** A valid note (the notes sidecar, extension/core/notes/sidecar.ts). */
const noteArb: fc.Arbitrary<Note> = fc.record({
  id: fc.stringMatching(/^n-[0-9a-f]{6,12}$/),
  t: fc.double({ noNaN: true, noDefaultInfinity: true, min: -1e9, max: 1e9 }),
  dt: fc.option(fc.double({ noNaN: true, min: 0, max: 1e3 }), { nil: undefined }),
  channel: fc.option(fc.constantFrom('tdoa', 'mag', 'position', 'gnss vel'), { nil: undefined }),
  updateId: fc.option(fc.constantFrom('4-5', '0-1', '12'), { nil: undefined }),
  finding: fc.option(fc.constantFrom('outlier', 'inconsistent', 'bias-step'), { nil: undefined }),
  text: fc.string({ maxLength: 40, unit: 'grapheme' }),
  tags: fc.array(fc.string({ maxLength: 8 }), { maxLength: 3 }),
  status: fc.constantFrom<'open' | 'resolved'>('open', 'resolved'),
  author: fc.option(fc.string({ maxLength: 10 }), { nil: undefined }),
}).map(({ dt, ...n }) => {
  const note: Note = { ...n };
  if (dt !== undefined && Number.isFinite(n.t + dt)) note.tEnd = n.t + dt;
  for (const k of Object.keys(note) as (keyof Note)[]) if (note[k] === undefined) delete note[k];
  return note;
});

/** Notes sidecars: valid ones, valid ones damaged, or any JSON. */
const notesText: fc.Arbitrary<string> = fc.oneof(
  { weight: 2, arbitrary: fc.uniqueArray(noteArb, { selector: (n) => n.id, maxLength: 6 }).map((notes) => serializeNotes(notes)) },
  { weight: 1, arbitrary: fc.jsonValue({ maxDepth: 3 }).map((v) => JSON.stringify({ format: 'residuum.notes/1', notes: v })) },
  { weight: 1, arbitrary: fc.jsonValue({ maxDepth: 3 }).map((v) => JSON.stringify(v)) },
).chain((s) => damaged(encoder.encode(s)).map((b) => new TextDecoder().decode(b)));

/** The notes reader never throws; problems are well formed; a file with problems yields no notes. */
function notesProperty() {
  return fc.property(notesText, (text) => {
    const r = parseNotes(text, 'log.csv.notes.json');
    const maxLine = lineCount(encoder.encode(text));
    for (const p of r.problems) {
      const d: Diagnostic = { severity: 'error', kind: 'parse-error', file: p.file, line: p.line, column: p.column, message: p.message };
      const problem = diagnosticProblem(d, ['log.csv.notes.json'], maxLine);
      if (problem) throw new Error(`${problem} (message: ${p.message})`);
      if (p.line < 1) throw new Error(`notes problem on line ${p.line}`);
    }
    if (r.problems.length > 0 && r.notes.length > 0) throw new Error('a notes file with problems still gave notes');
  });
}

/** Notes written by serializeNotes read back as the same notes, and writing them again gives the same text. */
function notesRoundTrip() {
  return fc.property(fc.uniqueArray(noteArb, { selector: (n) => n.id, maxLength: 8 }), (notes) => {
    const text = serializeNotes(notes);
    const r = parseNotes(text, 'log.csv.notes.json');
    if (r.problems.length > 0) throw new Error(`problems in a serialized file: ${r.problems.map((p) => p.message).join(' | ')}`);
    if (r.notes.length !== notes.length) throw new Error(`read ${r.notes.length} of ${notes.length} notes`);
    const again = serializeNotes(r.notes);
    if (again !== text) throw new Error(`not stable:\n${text}\n${again}`);
  });
}

/** A named property and its share of the runs. */
export interface FuzzTarget {
  name: string;
  /** Relative share of the total number of runs. */
  weight: number;
  /** Run `numRuns` cases from `seed`. */
  run(numRuns: number, seed: number, options?: FuzzRunOptions): Promise<FuzzResult>;
}

/** How a target runs. */
export interface FuzzRunOptions {
  /** Shrink a counterexample (default true; the script turns it off so a pathologically slow reader cannot stall it). */
  shrink?: boolean;
  /** Stop the target after this many milliseconds (the cases run so far are reported). */
  timeLimit_ms?: number;
}

/** Outcome of one target: cases run, and the shrunk counterexample when one failed. */
export interface FuzzResult {
  runs: number;
  failure?: string;
  /** True when the time limit stopped the target early. */
  interrupted?: boolean;
}

function target<Ts extends unknown[]>(name: string, weight: number, property: fc.IRawProperty<Ts>): FuzzTarget {
  return {
    name,
    weight,
    async run(numRuns: number, seed: number, options: FuzzRunOptions = {}): Promise<FuzzResult> {
      const r = await fc.check(property, {
        seed, numRuns, endOnFailure: options.shrink === false,
        ...(options.timeLimit_ms !== undefined ? { interruptAfterTimeLimit: options.timeLimit_ms, markInterruptAsFailure: false } : {}),
      });
      if (!r.failed) return { runs: r.numRuns, interrupted: r.interrupted };
      const err = r.errorInstance instanceof Error ? r.errorInstance.message : String(r.errorInstance);
      return {
        runs: r.numRuns,
        failure: `${name}: seed ${seed}, path ${r.counterexamplePath}: ${err.slice(0, 2000)}\n  counterexample: ${fc.stringify(r.counterexample).slice(0, 1500)}`,
      };
    },
  };
}

/** Every reader property. */
export function fuzzTargets(): FuzzTarget[] {
  return [
    target('csv: robust', 25, robustRead('log.csv', csvBytes)),
    target('csv: exact round trip', 10, csvRoundTrip()),
    target('jsonl: robust', 20, robustRead('log.jsonl', jsonlBytes)),
    target('json: robust', 15, robustRead('log.json', jsonBytes)),
    target('mapping: robust', 15, mappingProperty()),
    target('anchors: robust', 10, anchorsProperty()),
    target('anchors: exact round trip', 5, anchorsRoundTrip()),
    target('notes: robust', 6, notesProperty()),
    target('notes: round trip', 4, notesRoundTrip()),
  ];
}

/** Run every target with `total` cases shared by weight, seeded from `seed`; reports each target as it ends. */
export async function runFuzz(
  total: number, seed: number, onTarget?: (name: string, runs: number, seconds: number, failure?: string, interrupted?: boolean) => void,
  targets: FuzzTarget[] = fuzzTargets(), options: FuzzRunOptions = {},
): Promise<{ runs: number; failures: string[] }> {
  const weights = targets.reduce((s, t) => s + t.weight, 0);
  let runs = 0;
  const failures: string[] = [];
  // Shares by cumulative weight, so the targets' counts add up to `total` exactly (rounding each share on its own
  // left the sum one short of 100,000).
  let cumulative = 0;
  for (const [k, t] of targets.entries()) {
    const before = Math.round((total * cumulative) / weights);
    cumulative += t.weight;
    const numRuns = Math.max(1, Math.round((total * cumulative) / weights) - before);
    const t0 = performance.now();
    const r = await t.run(numRuns, seed + k, options);
    runs += r.runs;
    if (r.failure) failures.push(r.failure);
    onTarget?.(t.name, r.runs, (performance.now() - t0) / 1000, r.failure, r.interrupted);
  }
  return { runs, failures };
}

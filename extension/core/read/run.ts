/**
 * Reading a run: the main log, its mapping file and the mapping's other files (measurement files, reference,
 * anchors), into one NavLog. Files are only ever read. Bad data never throws: every problem is a Diagnostic naming
 * file, line and column. Only cancellation through `signal` rejects (with the signal's reason).
 */
import type { Diagnostic, NavLog } from '../model';
import { parseAnchorsText } from './anchors';
import { ByteBuffer } from './bytes';
import { attachBudget, type ColumnBudget } from './budget';
import { RunBuilder, toAnchors, toChannel, toImu, toRanges, toStateStream, toTdoa } from './builder';
import { timeChecks, GAP_FACTOR } from './checks';
import { CsvFileReader } from './csv';
import { JsonFileReader, JsonlFileReader } from './json';
import { parseJson } from './jsonValue';
import { parseMapping, type FileSpec, type Mapping } from './mapping';
import type { FileRole } from './plan';
import { decodeUtf8, encodeUtf8 } from './utf8';
import { clip } from './diagnostics';

/** The part of an AbortSignal the reader uses (a DOM or Node AbortSignal fits). */
export interface AbortSignalLike {
  readonly aborted: boolean;
  readonly reason?: unknown;
}

/** A file (or any byte stream) to read: a name for messages and its bytes in chunks. */
export interface ByteSource {
  /** Name used in NavLog.files and diagnostics (usually the path as given). */
  name: string;
  /** The bytes, in order, as chunks. May reject (missing file...); the reader turns that into a diagnostic. */
  chunks(signal?: AbortSignalLike): AsyncIterable<Uint8Array>;
  /** Total size in bytes when known (for progress). */
  size?: number;
}

/** Options of {@link readRun}. */
export interface ReadOptions {
  /** A mapping file's text and name (its name is what relative paths in it are resolved against). */
  map?: { text: string; name: string };
  /** An anchors file (CSV id,x,y,z or JSON), in addition to any the mapping names. */
  anchors?: ByteSource;
  /** A reference trajectory file, instead of the mapping's `reference`. */
  reference?: ByteSource;
  /**
   * Opens a file named by a relative `path`, relative to the file `relativeTo` (the mapping file, or the main log):
   * undefined when it does not exist. Without it, only the main log (and `anchors`/`reference`) are read; with it
   * and no `map`, `<main log name>.map.json` is looked for beside the log.
   */
  open?: (path: string, relativeTo: string) => ByteSource | undefined;
  signal?: AbortSignalLike;
  /** Called after each chunk with the bytes read so far across the run's files. */
  onProgress?: (bytesRead: number) => void;
  /** A step longer than this many median steps is a `time-gap` (default 5). */
  maxGapSteps?: number;
  /** Memory budget of the columns, bytes (budget.ts); beyond it streams are decimated and the log marked partial. */
  memoryBudgetBytes?: number;
  /**
   * Allocate the log's columns on SharedArrayBuffers, so that posting the NavLog to a worker thread shares them
   * instead of copying them (the command line's parallel analysis). Such a log cannot have its buffers transferred.
   */
  sharedColumns?: boolean;
}

/** Options of a {@link LogReader}. */
export interface LogReaderOptions {
  /** A validated mapping (see parseMapping) and the name of its file. */
  mapping?: Mapping;
  mapName?: string;
  /** Force a format instead of guessing from the name and the first bytes. */
  format?: 'csv' | 'jsonl' | 'json';
  maxGapSteps?: number;
  /** Size of the main log in bytes, when known (lets the reader reserve its columns once). */
  sizeHint?: number;
  /** Memory budget of the columns, bytes (budget.ts); beyond it streams are decimated and the log marked partial. */
  memoryBudgetBytes?: number;
  /** Columns on SharedArrayBuffers (see ReadOptions.sharedColumns). */
  sharedColumns?: boolean;
}

function extFormat(name: string): 'csv' | 'jsonl' | 'json' | undefined {
  const n = name.toLowerCase();
  if (n.endsWith('.jsonl') || n.endsWith('.ndjson')) return 'jsonl';
  if (n.endsWith('.json')) return 'json';
  if (n.endsWith('.csv') || n.endsWith('.tsv') || n.endsWith('.txt')) return 'csv';
  return undefined;
}

/**
 * One file of a run being read: picks CSV, JSON Lines or JSON (from the mapping, the file name, else the first
 * bytes) and feeds the right reader.
 */
export class FileIngest {
  format: 'csv' | 'jsonl' | 'json' | undefined;
  private reader: CsvFileReader | JsonlFileReader | JsonFileReader | undefined;
  private readonly head = new ByteBuffer();
  bytesRead = 0;

  constructor(private readonly run: RunBuilder, readonly name: string,
    private readonly opts: { spec?: FileSpec; mapping?: Mapping; role: FileRole; mapName?: string; format?: 'csv' | 'jsonl' | 'json';
      sizeHint?: number }) {
    run.fileIndex(name);
    this.format = opts.format ?? opts.spec?.format ?? extFormat(name);
    if (this.format) this.create(this.format);
  }

  private create(format: 'csv' | 'jsonl' | 'json'): CsvFileReader | JsonlFileReader | JsonFileReader {
    this.format = format;
    const o = { spec: this.opts.spec, mapping: this.opts.mapping, role: this.opts.role, mapName: this.opts.mapName,
      sizeHint: this.opts.sizeHint };
    return this.reader = format === 'csv' ? new CsvFileReader(this.run, this.name, o)
      : format === 'jsonl' ? new JsonlFileReader(this.run, this.name, o)
        : new JsonFileReader(this.run, this.name, o);
  }

  /** Guess the format from the first bytes; undefined while more bytes are needed. */
  private sniff(final: boolean): 'csv' | 'jsonl' | 'json' | undefined {
    const b = this.head.bytes;
    const n = this.head.length;
    let i = 0;
    if (n >= 3 && b[0] === 0xef && b[1] === 0xbb && b[2] === 0xbf) i = 3;
    while (i < n && (b[i] === 0x20 || b[i] === 0x0a || b[i] === 0x0d || b[i] === 0x09)) i++;
    if (i >= n) return final ? 'csv' : undefined;
    if (b[i] === 0x5b) return 'json';
    if (b[i] !== 0x7b) return 'csv';
    let e = i;
    while (e < n && b[e] !== 0x0a && b[e] !== 0x0d) e++;
    if (e >= n && !final && n < 1 << 20) return undefined;
    const first = parseJson(decodeUtf8(b, i, e));
    return first.ok && e < n ? 'jsonl' : 'json';
  }

  /** Feed a chunk. */
  push(chunk: Uint8Array): void {
    if (this.bytesRead === 0 && chunk.length >= 2 && ((chunk[0] === 0xff && chunk[1] === 0xfe) || (chunk[0] === 0xfe && chunk[1] === 0xff))) {
      this.run.diagnostics.report('error', 'parse-error', this.name, 1,
        'The file starts with a UTF-16 byte order mark: it is UTF-16 text, but logs are read as UTF-8 (save it as UTF-8).',
        { column: 1 });
    }
    this.bytesRead += chunk.length;
    if (this.reader) { this.reader.push(chunk); return; }
    this.head.append(chunk);
    const f = this.sniff(false);
    if (f) {
      const reader = this.create(f);
      const all = this.head.copy();
      this.head.clear();
      reader.push(all);
    }
  }

  /** End of the file. */
  finish(): void {
    let r = this.reader;
    if (!r) {
      r = this.create(this.sniff(true) ?? 'csv');
      const all = this.head.copy();
      this.head.clear();
      if (all.length > 0) r.push(all);
    }
    if (r instanceof JsonlFileReader) r.finish(this.run);
    else r.finish();
  }
}

/**
 * Incremental reader of one log (the main file of a run), for tailing a growing file:
 * keep the LogReader, push the bytes appended since the last read (the host re-opens the file at byte offset
 * `reader.bytesRead`, e.g. `fileByteSource(path, { start: reader.bytesRead })`), then call {@link snapshot} for a
 * NavLog of the complete lines so far. {@link finish} ends the file (an unterminated last line is read too).
 * A snapshot's arrays are views: take a new snapshot after further pushes rather than keeping old ones.
 */
export class LogReader {
  readonly run = new RunBuilder();
  private readonly main: FileIngest;
  private finished: NavLog | undefined;
  private readonly extraFiles: string[] = [];
  private readonly budget: ColumnBudget | undefined;

  constructor(readonly name: string, private readonly options: LogReaderOptions = {}) {
    if (options.sharedColumns) this.run.useSharedColumns();
    if (options.memoryBudgetBytes !== undefined && options.memoryBudgetBytes > 0) this.budget = attachBudget(this.run, options.memoryBudgetBytes);
    this.main = new FileIngest(this.run, name, {
      spec: options.mapping, mapping: options.mapping, role: 'estimate', mapName: options.mapName, format: options.format,
      sizeHint: options.sizeHint,
    });
  }

  /** Bytes of the main log consumed so far (the offset to resume reading a growing file from). */
  get bytesRead(): number {
    return this.main.bytesRead;
  }

  /** Feed the next bytes of the main log. */
  push(chunk: Uint8Array): void {
    if (this.finished) return;
    this.main.push(chunk);
  }

  /** Start another file of the same run (a measurement file, the reference); feed it and call its finish(). */
  openFile(name: string, spec: FileSpec | undefined, role: FileRole, sizeHint?: number): FileIngest {
    return new FileIngest(this.run, name, { spec, mapping: this.options.mapping, role, mapName: this.options.mapName, sizeHint });
  }

  /** Add diagnostics found outside the files' data (mapping file, missing files). */
  addDiagnostics(list: Diagnostic[]): void {
    for (const d of list) this.run.diagnostics.add(d, `once:${d.file}:${d.line}:${d.column ?? 0}:${d.message}`);
  }

  /** Name a file that was read but holds no records (mapping, anchors) in NavLog.files. */
  noteFile(name: string): void {
    if (!this.extraFiles.includes(name)) this.extraFiles.push(name);
  }

  /** The run so far, without ending the main file. */
  snapshot(): NavLog {
    if (this.finished) return this.finished;
    const log = assemble(this.run, this.main.format ?? 'csv', this.name, this.options, this.extraFiles, false);
    this.budget?.annotate(log);
    return log;
  }

  /** End of the main log: read its last line and return the NavLog. Later calls return the same NavLog. */
  finish(): NavLog {
    if (this.finished) return this.finished;
    this.main.finish();
    this.finished = assemble(this.run, this.main.format ?? 'csv', this.name, this.options, this.extraFiles, true);
    this.budget?.annotate(this.finished);
    return this.finished;
  }
}

function assemble(run: RunBuilder, format: 'csv' | 'jsonl' | 'json', path: string, options: LogReaderOptions,
  extraFiles: string[], final: boolean): NavLog {
  const mapping = options.mapping;
  const files = run.files;
  const diagnostics = run.diagnostics.snapshot();
  const gap = options.maxGapSteps ?? GAP_FACTOR;
  // Time checks look at each file's records in reading order (per file segment), before any join.
  diagnostics.push(...timeChecks(run.state, 'state records', files, undefined, gap));
  diagnostics.push(...timeChecks(run.reference, 'reference', files, undefined, gap));
  for (const c of run.channels.values()) diagnostics.push(...timeChecks(c, `updates of channel ${c.name}`, files, c.name, gap));
  diagnostics.push(...timeChecks(run.imu, 'IMU samples', files, undefined, gap));
  diagnostics.push(...timeChecks(run.tdoa, 'TDOA records', files, undefined, gap));
  diagnostics.push(...timeChecks(run.ranges, 'ranges', files, undefined, gap));
  // Then the files of a stream are joined by time (only once the run is complete).
  if (final) {
    run.state.joinByTime();
    run.reference.joinByTime();
    for (const c of run.channels.values()) c.joinByTime();
    run.imu.joinByTime();
    run.tdoa.joinByTime();
    run.ranges.joinByTime();
  }

  const meta: Record<string, string> = { ...run.meta };
  for (const [k, v] of Object.entries(mapping?.meta ?? {})) meta[k.toLowerCase()] = String(v);
  let frame: 'ENU' | 'NED' | undefined = mapping?.frame;
  if (!frame && meta.frame !== undefined) {
    const f = meta.frame.trim().toUpperCase();
    if (f === 'ENU' || f === 'NED') frame = f;
    else diagnostics.push({ severity: 'warning', kind: 'bad-value', file: path, line: 0,
      message: `Metadata "frame: ${clip(String(meta.frame))}" is not ENU or NED; the frame is left unknown.` });
  }
  let P: { states: string[]; matrix: Float64Array } | undefined;
  if (run.pStates) {
    const m = run.state.view('__P');
    if (m) P = { states: run.pStates, matrix: m };
  }
  const log: NavLog = {
    path,
    format,
    rows: run.rows,
    meta,
    state: toStateStream(run.state, files, P),
    channels: [...run.channels.values()].map((c) => toChannel(c, files)),
    anchors: toAnchors(run),
    anchorIds: run.anchorIds.list,
    resets: [...run.resets].sort((a, b) => a - b),
    files: [...files, ...extraFiles.filter((f) => !files.includes(f))],
    conventions: { attitudeErrorSide: mapping?.conventions?.attitudeErrorSide ?? 'nav' },
    diagnostics,
  };
  if (frame) log.frame = frame;
  if (mapping?.conventions?.errorGroup) log.conventions.errorGroup = mapping.conventions.errorGroup;
  const imu = toImu(run.imu, files); if (imu) log.imu = imu;
  const tdoa = toTdoa(run.tdoa, files); if (tdoa) log.tdoa = tdoa;
  const ranges = toRanges(run.ranges, files); if (ranges) log.ranges = ranges;
  if (run.reference.length > 0) log.reference = toStateStream(run.reference, files);
  if (mapping?.imuSpec) log.imuSpecRaw = { ...mapping.imuSpec };
  const src = meta.source !== undefined ? /^(.*?):(\d+)\s*$/.exec(meta.source) : null;
  if (src) log.source = { path: src[1], line: Number(src[2]) };
  if (!log.state.file && files.length > 0) log.state.file = path;
  return log;
}

function abortError(signal: AbortSignalLike): unknown {
  return signal.reason ?? new Error('The read was cancelled.');
}

/** Stream `src` into `sink`; read failures become a diagnostic. Rejects only when `signal` is aborted. */
async function pump(src: ByteSource, sink: { push(c: Uint8Array): void }, reader: LogReader, options: ReadOptions,
  progress: { bytes: number }): Promise<boolean> {
  try {
    for await (const chunk of src.chunks(options.signal)) {
      if (options.signal?.aborted) throw abortError(options.signal);
      sink.push(chunk);
      progress.bytes += chunk.length;
      options.onProgress?.(progress.bytes);
    }
    return true;
  } catch (e) {
    if (options.signal?.aborted) throw abortError(options.signal);
    reader.addDiagnostics([{ severity: 'error', kind: 'parse-error', file: src.name, line: 0,
      message: `Could not read ${src.name}: ${clip(e instanceof Error ? e.message : String(e), 120)}` }]);
    return false;
  }
}

async function readText(src: ByteSource, reader: LogReader, options: ReadOptions, progress: { bytes: number }): Promise<string | undefined> {
  const buf = new ByteBuffer();
  const ok = await pump(src, { push: (c) => buf.append(c) }, reader, options, progress);
  return ok ? decodeUtf8(buf.bytes, 0, buf.length) : undefined;
}

function baseName(path: string): string {
  const k = Math.max(path.lastIndexOf('/'), path.lastIndexOf('\\'));
  return k >= 0 ? path.slice(k + 1) : path;
}

/**
 * Read a run: the main log, its mapping (given, or `<log>.map.json` beside it through `open`), and the files the
 * mapping names (measurement files, reference, anchors), resolved with `open(path, mappingFileName)`.
 * Returns a NavLog whose `files` lists every file read and whose `diagnostics` hold every problem. Never rejects for
 * bad data; rejects only when `options.signal` is aborted.
 */
export async function readRun(main: ByteSource, options: ReadOptions = {}): Promise<NavLog> {
  const progress = { bytes: 0 };
  const early: Diagnostic[] = [];
  let mapping: Mapping | undefined;
  let mapName: string | undefined;
  let mapText: string | undefined;
  // A throwaway reader collects diagnostics of the mapping read before the real reader exists.
  const pre = new LogReader(main.name);
  if (options.map) {
    mapName = options.map.name;
    mapText = options.map.text;
  } else if (options.open) {
    let src: ByteSource | undefined;
    try { src = options.open(`${baseName(main.name)}.map.json`, main.name); } catch { src = undefined; }
    if (src) {
      mapName = src.name;
      mapText = await readText(src, pre, options, progress);
    }
  }
  if (mapText !== undefined && mapName !== undefined) {
    const r = parseMapping(mapText, mapName);
    mapping = r.mapping;
    early.push(...r.diagnostics);
  }
  early.push(...pre.run.diagnostics.snapshot());
  const reader = new LogReader(main.name, { mapping, mapName, maxGapSteps: options.maxGapSteps, sizeHint: main.size,
    memoryBudgetBytes: options.memoryBudgetBytes, sharedColumns: options.sharedColumns });
  reader.addDiagnostics(early);
  if (mapName !== undefined) reader.noteFile(mapName);
  await pump(main, reader, reader, options, progress);
  const relativeTo = mapName ?? main.name;

  const openListed = (path: string, what: string): ByteSource | undefined => {
    let src: ByteSource | undefined;
    try { src = options.open?.(path, relativeTo); } catch (e) {
      reader.addDiagnostics([{ severity: 'error', kind: 'parse-error', file: mapName ?? main.name, line: 0,
        message: `Could not open ${what} "${clip(path)}": ${e instanceof Error ? e.message : String(e)}` }]);
      return undefined;
    }
    if (!src) {
      reader.addDiagnostics([{ severity: 'error', kind: 'parse-error', file: mapName ?? main.name, line: 0,
        message: options.open ? `The ${what} "${clip(path)}" named by the mapping file was not found (relative to ${relativeTo}).`
          : `The ${what} "${clip(path)}" named by the mapping file cannot be opened here (no file access was given).` }]);
    }
    return src;
  };
  const readOther = async (src: ByteSource, spec: FileSpec | undefined, role: FileRole): Promise<void> => {
    const ingest = reader.openFile(src.name, spec, role, src.size);
    await pump(src, ingest, reader, options, progress);
    ingest.finish();
  };

  for (const f of mapping?.files ?? []) {
    const src = openListed(f.path, 'file');
    if (src) await readOther(src, f, f.role ?? 'measurements');
  }
  if (options.reference) {
    await readOther(options.reference, typeof mapping?.reference === 'object' ? mapping.reference : undefined, 'reference');
  } else if (mapping?.reference !== undefined) {
    const spec = typeof mapping.reference === 'string' ? { path: mapping.reference } : mapping.reference;
    const src = openListed(spec.path, 'reference');
    if (src) await readOther(src, spec, 'reference');
  }
  const anchorSources: ByteSource[] = [];
  if (typeof mapping?.anchors === 'string') {
    const src = openListed(mapping.anchors, 'anchors file');
    if (src) anchorSources.push(src);
  } else if (Array.isArray(mapping?.anchors)) {
    for (const a of mapping.anchors) reader.run.addAnchor(String(a.id), [a.p[0], a.p[1], a.p[2]], mapName ?? main.name, 0);
  }
  if (options.anchors) anchorSources.push(options.anchors);
  for (const src of anchorSources) {
    const text = await readText(src, reader, options, progress);
    reader.noteFile(src.name);
    if (text === undefined) continue;
    const r = parseAnchorsText(text, src.name);
    reader.addDiagnostics(r.diagnostics);
    for (const a of r.anchors) reader.run.addAnchor(a.id, a.p, src.name, 0);
  }
  return reader.finish();
}

/** A ByteSource over bytes in memory, cut into chunks of `chunkSize` bytes (to exercise chunk boundaries). */
export function bytesSource(name: string, bytes: Uint8Array, chunkSize = 1 << 16): ByteSource {
  return {
    name,
    size: bytes.length,
    async *chunks(): AsyncIterable<Uint8Array> {
      for (let k = 0; k < bytes.length; k += chunkSize) yield bytes.subarray(k, Math.min(bytes.length, k + chunkSize));
    },
  };
}

/** A ByteSource over a string (UTF-8 encoded). */
export function textSource(name: string, text: string, chunkSize = 1 << 16): ByteSource {
  return bytesSource(name, encodeUtf8(text), chunkSize);
}

/** Convenience for tests and small inputs: read a log given as text (other files through `options.open`). */
export function readLogText(text: string, name: string, options: ReadOptions & { chunkSize?: number } = {}): Promise<NavLog> {
  return readRun(textSource(name, text, options.chunkSize), options);
}

/**
 * Read an anchors file (CSV `id,x,y,z` or JSON `[{"id", "p": [x, y, z]}]`). Never rejects for bad data; problems are
 * diagnostics naming the file, line and column.
 */
export async function readAnchors(source: ByteSource, options: { signal?: AbortSignalLike } = {}): Promise<{ anchors: NavLog['anchors']; diagnostics: Diagnostic[] }> {
  const reader = new LogReader(source.name);
  const text = await readText(source, reader, options, { bytes: 0 });
  if (text === undefined) return { anchors: [], diagnostics: reader.run.diagnostics.snapshot() };
  return parseAnchorsText(text, source.name);
}

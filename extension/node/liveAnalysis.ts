/**
 * The analysis of one log that the editor keeps between runs, so a log that grows while the estimator runs is read
 * from the last byte read, not from the start. Node-only (no `vscode`): the extension host's worker thread holds one
 * per panel (extension/host/analysisWorker.ts).
 *
 * Each {@link LiveAnalysis.run}:
 * - reads the mapping file again (it is small); when it, the mapping path or a reader setting changed, the log is
 *   read again from the start (the mapping decides how every byte is read);
 * - otherwise polls a {@link FileTail}: only the bytes appended since the last run are read; a truncated or replaced
 *   log is read again from the start and a note says so;
 * - analyses a snapshot of the complete lines read so far with the pure core and returns the report and series.
 *
 * A run of several files (a mapping naming measurement files, a reference or an anchors file), a separate anchors or
 * reference file, or a single JSON document (`.json`, which only parses whole) is read whole on every run by
 * {@link analyzeFile}: those cannot be followed byte by byte.
 *
 * A last line without a line end is left out until it is complete (the estimator may still be writing it), and a
 * note says so: unlike the command-line tool, which reads a file once and takes such a line as the last record.
 */
import { createHash, type Hash } from 'node:crypto';
import type { Diagnostic, NavLog } from '../core/model';
import { parseMapping, type Mapping } from '../core/read/index';
import { resolveSettings, type AnalysisSettings } from '../core/settings';
import { analyzeFile, analyzeWithSidecar, assertReadableFile, InputError, readMappingFile, type FileAnalysis } from './analyzeFile';
import { NODE_FILES, type FileLayer } from './fileSource';
import type { ReadInfo } from '../protocol';
import { FileTail } from './tail';

/** Options of a live analysis (fixed for its lifetime, except what {@link LiveAnalysis.run} re-reads). */
export interface LiveAnalysisOptions {
  /** Mapping file; default: `<log>.map.json` beside the log when it exists (looked up on every run). */
  map?: string;
  /** Anchors file (CSV or JSON): the log is then read whole on every run. */
  anchors?: string;
  /** Separate reference trajectory file: the log is then read whole on every run. */
  reference?: string;
  settings?: Partial<AnalysisSettings>;
  /** File layer for the log's reads (default node:fs); tests inject faults here. */
  files?: FileLayer;
}

/** How one run read the log (a wire type: the panel shows it). */
export type { ReadInfo };

/** One run's outcome: the analysis and how the log was read. */
export interface LiveRun extends FileAnalysis {
  read: ReadInfo;
}

/** Per-run hooks. */
export interface LiveRunOptions {
  /** Fraction of this run's bytes read so far, 0..1. */
  onProgress?: (fraction: number) => void;
  /** Stops a whole read (tail reads are short and run to the end). */
  signal?: AbortSignal;
}

/** The reader state a tail depends on: when any of it changes, the log is read again from the start. */
interface TailKey {
  mapPath: string | undefined;
  mapText: string | undefined;
  memoryBudgetBytes: number;
}

/** A log's analysis kept between runs (see the file comment). */
export class LiveAnalysis {
  private tail: FileTail | undefined;
  private key: string | undefined;
  private hash: Hash = createHash('sha256');
  private lastByte = -1;

  /** Follow `logPath` with `options`. Nothing is read until the first {@link run}. */
  constructor(readonly logPath: string, private readonly options: LiveAnalysisOptions = {}) {}

  /** Bytes of the log read and kept so far (0 before the first tail run, and in whole mode). */
  get bytesRead(): number {
    return this.tail?.bytesRead ?? 0;
  }

  /**
   * Read what changed and analyse the log. Throws InputError (one plain line) when the log or its mapping cannot be
   * read; bad data becomes findings.
   */
  async run(runOptions: LiveRunOptions = {}): Promise<LiveRun> {
    try {
      assertReadableFile(this.logPath, 'log');
    } catch (e) {
      // Gone or unreadable: whatever comes back at this path is read from the start.
      this.tail = undefined;
      throw e;
    }
    const settings = resolveSettings(this.options.settings);
    const map = readMappingFile(this.logPath, this.options.map);
    const mapPath = map?.name;
    const mapText = map?.text;
    const parsed = mapText !== undefined && mapPath !== undefined ? parseMapping(mapText, mapPath) : undefined;
    if (!this.canTail(parsed?.mapping)) return this.runWhole(runOptions);

    const key = JSON.stringify({ mapPath, mapText, memoryBudgetBytes: settings.memoryBudgetBytes } satisfies TailKey);
    let restarted: ReadInfo['restarted'];
    if (this.tail && this.key !== key) {
      this.tail = undefined;
      restarted = 'mapping';
    }
    const size = await this.sizeOf();
    this.tail ??= this.newTail(parsed, mapPath, settings.memoryBudgetBytes, size);
    this.key = key;
    const tail = this.tail;

    let start = tail.bytesRead;
    const onProgress = runOptions.onProgress;
    this.onChunk = onProgress && size !== undefined
      ? (chunk, at) => {
        if (at === 0) start = 0;
        onProgress(size > start ? Math.min(1, (at + chunk.length - start) / (size - start)) : 1);
      }
      : undefined;
    let polled;
    try {
      polled = await tail.poll();
    } catch (e) {
      // The tail is unusable after a failed read (e.g. the log was deleted): start afresh next time.
      this.tail = undefined;
      throw new InputError(`log cannot be read: ${e instanceof Error ? e.message : String(e)}`);
    } finally {
      this.onChunk = undefined;
    }
    if (polled.restarted) {
      restarted = polled.restarted;
      start = 0;
    }
    const log = polled.log;
    if (log.format === 'json') {
      // Sniffed as one JSON document, which only parses whole.
      return this.runWhole(runOptions);
    }
    const total = tail.bytesRead;
    this.addPendingLineNote(log, total);
    onProgress?.(1);
    settings.map = mapPath;
    const { report, series } = analyzeWithSidecar(this.logPath, log, settings, this.hash.copy().digest('hex'));
    const read: ReadInfo = { mode: 'tail', start, bytes: total - start, total };
    if (restarted) read.restarted = restarted;
    return { report, series, log, read };
  }

  /** The current per-run chunk hook (set by {@link run} while it polls). */
  private onChunk: ((chunk: Uint8Array, start: number) => void) | undefined;

  private newTail(parsed: { mapping?: Mapping; diagnostics: Diagnostic[] } | undefined, mapPath: string | undefined,
    memoryBudgetBytes: number, sizeHint: number | undefined): FileTail {
    const mapping = parsed?.mapping;
    return new FileTail(this.logPath, {
      mapping,
      mapName: mapPath,
      memoryBudgetBytes,
      // The size when the tail starts lets the reader reserve its columns once (they grow as the log does).
      ...(sizeHint !== undefined ? { sizeHint } : {}),
      files: this.options.files,
      prepare: (reader) => {
        this.hashReset();
        if (parsed) reader.addDiagnostics(parsed.diagnostics);
        if (mapPath !== undefined) reader.noteFile(mapPath);
        if (Array.isArray(mapping?.anchors)) {
          for (const a of mapping.anchors) reader.run.addAnchor(String(a.id), [a.p[0], a.p[1], a.p[2]], mapPath ?? this.logPath, 0);
        }
      },
      onChunk: (chunk, at) => {
        if (at === 0) this.hashReset();
        this.hash.update(chunk);
        if (chunk.length > 0) this.lastByte = chunk[chunk.length - 1];
        this.onChunk?.(chunk, at);
      },
    });
  }

  private hashReset(): void {
    this.hash = createHash('sha256');
    this.lastByte = -1;
  }

  /** Whether the log can be followed byte by byte (one file, not a single JSON document). */
  private canTail(mapping: Mapping | undefined): boolean {
    if (this.options.anchors !== undefined || this.options.reference !== undefined) return false;
    if (mapping && ((mapping.files?.length ?? 0) > 0 || mapping.reference !== undefined || typeof mapping.anchors === 'string')) return false;
    if (mapping?.format === 'json') return false;
    const n = this.logPath.toLowerCase();
    return !(n.endsWith('.json') && mapping?.format === undefined);
  }

  /** Read the whole run again (the files of a run, or a JSON document); no state is kept. */
  private async runWhole(runOptions: LiveRunOptions): Promise<LiveRun> {
    this.tail = undefined;
    this.key = undefined;
    const r = await analyzeFile(this.logPath, {
      map: this.options.map,
      anchors: this.options.anchors,
      reference: this.options.reference,
      settings: this.options.settings,
      files: this.options.files,
      signal: runOptions.signal,
      onProgress: runOptions.onProgress,
    });
    const size = (await this.sizeOf()) ?? 0;
    return { ...r, read: { mode: 'whole', start: 0, bytes: size, total: size } };
  }

  /** A note when the last line read has no line end yet (it is held back until it is complete). */
  private addPendingLineNote(log: NavLog, total: number): void {
    if (total === 0 || this.lastByte === 0x0a || this.lastByte === 0x0d) return;
    log.diagnostics.push({ severity: 'info', kind: 'note', file: this.logPath, line: 0,
      message: 'The last line of the log has no line end yet: it is left out until it is complete (the estimator may still be writing it).' });
  }

  private async sizeOf(): Promise<number | undefined> {
    try {
      return (await (this.options.files ?? NODE_FILES).stat(this.logPath)).size;
    } catch {
      return undefined;
    }
  }
}

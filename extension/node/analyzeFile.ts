/**
 * Node adapter of the analysis: reads a log (and the files of its run) from disk, hashes it while it streams,
 * and hands the bytes to the pure core. Shared by the command-line tool and the extension host's worker.
 */
import { createHash } from 'node:crypto';
import { existsSync, readFileSync, statSync } from 'node:fs';
import * as path from 'node:path';
import type { NavLog } from '../core/model';
import type { Series } from '../core/series';
import type { Report } from '../core/report';
import { resolveSettings, type AnalysisSettings } from '../core/settings';
import { analyzeLog, type StageTimes } from '../core/analyze';
import { readRun, type ByteSource } from '../core/read/index';
import { fileByteSource, openRelative, FileChangedError, type FileLayer } from './fileSource';
import { notesForReport } from './notesReport';
import { mergeResetTimes } from '../core/resets/segments';

/** Options of one analysis of a file on disk. */
export interface AnalyzeFileOptions {
  /** Mapping file; default: `<log>.map.json` beside the log when it exists. */
  map?: string;
  /** Anchors file (CSV or JSON). */
  anchors?: string;
  /** Separate reference trajectory file. */
  reference?: string;
  settings?: Partial<AnalysisSettings>;
  signal?: AbortSignal;
  /** Fraction of the main file read so far, 0..1. */
  onProgress?: (fraction: number) => void;
  /** Filled with per-stage elapsed milliseconds (read, analyse stages). */
  times?: StageTimes;
  /** File layer for every read of the log, anchors and reference (default node:fs); tests inject faults here. */
  files?: FileLayer;
  /**
   * Notes to carry in the report; default: those of `<log>.notes.json`, anchored to the log (see notesReport.ts),
   * whose confirmed resets (`"reset": true`) are then added to `settings.confirmedResets_s`.
   */
  notes?: unknown[];
}

/** The report, the panel's series and the log they came from. */
export interface FileAnalysis {
  report: Report;
  series: Series[];
  log: NavLog;
}

/** An input problem that stops the analysis (missing or unreadable file, malformed mapping): one plain line. */
export class InputError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'InputError';
  }
}

/** Check that `file` is a readable regular file; throws InputError with one plain line otherwise. */
export function assertReadableFile(file: string, what: string): void {
  let st;
  try {
    st = statSync(file);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new InputError(code === 'ENOENT' ? `${what} not found: ${file}` : `${what} cannot be read: ${file} (${code ?? String(e)})`);
  }
  if (st.isDirectory()) throw new InputError(`${what} is a folder, not a file: ${file}`);
  if (!st.isFile()) throw new InputError(`${what} is not a regular file (a pipe or device?): ${file}`);
}

/**
 * The mapping file of a log and its text: `given`, else `<log>.map.json` beside the log when it exists, else none.
 * Throws InputError when the mapping file cannot be read.
 */
export function readMappingFile(logPath: string, given?: string): { text: string; name: string } | undefined {
  const name = given ?? (existsSync(`${logPath}.map.json`) ? `${logPath}.map.json` : undefined);
  if (name === undefined) return undefined;
  assertReadableFile(name, 'mapping file');
  return { text: readFileSync(name, 'utf8'), name };
}

/** Analyse one log file with the files of its run. Throws InputError for unreadable inputs; bad data becomes findings. */
export async function analyzeFile(logPath: string, options: AnalyzeFileOptions = {}): Promise<FileAnalysis> {
  assertReadableFile(logPath, 'log');
  const settings = resolveSettings(options.settings);
  const map = readMappingFile(logPath, options.map);
  if (map) settings.map = map.name;
  for (const [file, what] of [[options.anchors, 'anchors file'], [options.reference, 'reference file']] as const) {
    if (file) assertReadableFile(file, what);
  }

  const t0 = performance.now();
  // The main log is read once more from the start when it changed under the reader (truncated, replaced or deleted);
  // a second change, or any read error, stops the analysis with one plain line.
  let attempt = await readMainOnce(logPath, options, settings.memoryBudgetBytes, map);
  if (attempt.failure instanceof FileChangedError) {
    const first = attempt.failure;
    assertReadableFile(logPath, 'log');
    attempt = await readMainOnce(logPath, options, settings.memoryBudgetBytes, map);
    if (!attempt.failure) {
      attempt.log.diagnostics.push({ severity: 'warning', kind: 'note', file: logPath, line: 0,
        message: `${first.message}; it was read again from the start and this analysis is of the file as it was then.` });
    }
  }
  if (attempt.failure) {
    if (attempt.failure instanceof FileChangedError) throw new InputError(`log changed again while it was being read a second time: ${attempt.failure.message}`);
    throw new InputError(`log cannot be read: ${attempt.failure.message}`);
  }
  const { log, hash } = attempt;
  if (options.times) options.times.read = performance.now() - t0;
  return analyzeWithSidecar(logPath, log, settings, hash, options.notes, options.times);
}

/**
 * Analyse a log read from `logPath` with its notes sidecar (`<log>.notes.json`): the sidecar's notes go into the
 * report, the resets confirmed there (`"reset": true`) split the run like those given in the settings (`--reset-at`),
 * and a sidecar that cannot be read is a finding. `notes` given: those notes instead, and the sidecar is not read.
 * `settings` is changed (its confirmed resets). Shared by {@link analyzeFile} and the live analysis of a growing log.
 */
export function analyzeWithSidecar(logPath: string, log: NavLog, settings: AnalysisSettings, sha256: string,
  notes?: unknown[], times?: StageTimes): FileAnalysis {
  const sidecar = notes === undefined ? notesForReport(logPath, log) : undefined;
  if (sidecar && sidecar.resets.length > 0) settings.confirmedResets_s = mergeResetTimes(settings.confirmedResets_s, sidecar.resets);
  const { report, series } = analyzeLog(log, settings, { sha256, notes: notes ?? sidecar?.notes }, times);
  if (sidecar?.finding) report.findings.push(sidecar.finding);
  return { report, series, log };
}

/** One read of the main log and its run: the log, the SHA-256 of the main log's bytes, and why the main log failed. */
async function readMainOnce(logPath: string, options: AnalyzeFileOptions, memoryBudgetBytes: number,
  map: { text: string; name: string } | undefined): Promise<{ log: NavLog; hash: string; failure?: Error }> {
  const files = options.files;
  const size = statSync(logPath).size;
  const hash = createHash('sha256');
  const raw = fileByteSource(logPath, { files, reuse: true }); // every consumer below copies what it keeps
  let bytesRead = 0;
  let failure: Error | undefined;
  const main: ByteSource = {
    name: logPath,
    size,
    async *chunks(signal?: AbortSignal) {
      try {
        for await (const chunk of raw.chunks(signal)) {
          hash.update(chunk);
          bytesRead += chunk.byteLength;
          options.onProgress?.(size > 0 ? Math.min(1, bytesRead / size) : 1);
          yield chunk;
        }
      } catch (e) {
        failure = e instanceof Error ? e : new Error(String(e));
        throw e;
      }
    },
  };
  const log = await readRun(main, {
    map,
    anchors: options.anchors ? fileByteSource(options.anchors, { files }) : undefined,
    reference: options.reference ? fileByteSource(options.reference, { files }) : undefined,
    open: (p: string, relativeTo: string) => openRelative(p, relativeTo),
    signal: options.signal,
    memoryBudgetBytes,
  });
  return { log, hash: hash.digest('hex'), ...(failure ? { failure } : {}) };
}

/** Absolute, normalised form of a user-given path (for messages and the report). */
export function displayPath(p: string): string {
  return path.relative(process.cwd(), path.resolve(p)) || p;
}

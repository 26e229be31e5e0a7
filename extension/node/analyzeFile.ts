/**
 * Node adapter of the analysis: reads a log (and the files of its run) from disk, hashes it while it streams,
 * and hands the bytes to the pure core. Shared by the command-line tool and the extension host's worker.
 */
import { createHash } from 'node:crypto';
import { existsSync, readFileSync, statSync } from 'node:fs';
import * as path from 'node:path';
import { availableParallelism } from 'node:os';
import type { NavLog } from '../core/model';
import type { Series } from '../core/series';
import type { Report } from '../core/report';
import { resolveSettings, type AnalysisSettings } from '../core/settings';
import { analyzeLog, type SourceInfo, type StageTimes } from '../core/analyze';
import { readRun, type ByteSource } from '../core/read/index';
import {
  appendSettled, fileByteSource, openRelative, FileChangedError, rewrittenMessage, rewrittenSince, stampOf, type FileLayer, type FileStamp,
} from './fileSource';
import { notesForReport } from './notesReport';
import { mergeResetTimes } from '../core/resets/segments';
import { analyzeLogParallel, DEFAULT_MIN_PARALLEL_BYTES, StageWorker, type ParallelOptions, type ParallelStats } from './parallelAnalysis';
import { checkIdentity, hashPrefixNow, type FileIdentity, type HashAnswer, type HashProgress } from './prefixHash';

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
  /**
   * The caller needs the report and the log, not the panel's series (the CLI's analyze and check without --html):
   * the log is hashed and its errors stage run in a second thread (parallelAnalysis.ts), with the same report.
   * `series` then comes back EMPTY. Ignored with `files` (the worker reads through node:fs).
   */
  parallel?: ParallelOptions;
}

/** The report, the panel's series and the log they came from. */
export interface FileAnalysis {
  report: Report;
  series: Series[];
  log: NavLog;
  /** With `parallel`: where the errors stage and the hash were computed (for `--profile`). */
  parallel?: ParallelStats;
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
  // The stage worker starts before the read: its bundle loads while this thread parses (parallelAnalysis.ts).
  const par = options.parallel && !options.files ? options.parallel : undefined;
  // One core: a second thread only adds its start-up (about 0.15 s of CPU) to the same critical path.
  const worker = par && availableParallelism() >= 2 && statSync(logPath).size >= (par.minBytes ?? DEFAULT_MIN_PARALLEL_BYTES)
    ? StageWorker.start(par.workerFile, logPath) : undefined;
  try {
    // The main log is read once more from the start when it changed under the reader (truncated, replaced, deleted or
    // rewritten in place; growth is not a change); a second change, or any read error, stops the analysis with one
    // plain line.
    let attempt = await readMainOnce(logPath, options, settings.memoryBudgetBytes, map, worker?.progress);
    if (par && !attempt.failure) {
      try {
        return await analyzeReadInParallel(logPath, attempt, settings, par, worker, options, t0);
      } catch (e) {
        if (!(e instanceof FileChangedError)) throw e;
        attempt = { ...attempt, failure: e }; // the hash showed the file changed during the read: read it again
      }
    }
    worker?.close(); // the read again is hashed here, as the sequential path does
    attempt = await readAgainIfChanged(logPath, options, settings, map, attempt);
    const { log, hash } = attempt;
    if (options.times) options.times.read = performance.now() - t0;
    const out = analyzeWithSidecar(logPath, log, settings, hash ?? '', options.notes, options.times);
    return par ? { ...out, series: [], parallel: { errorsIn: 'main', why: 'the log was read again', errors_ms: options.times?.errors ?? 0, wait_ms: 0, hashIn: 'main' } } : out;
  } finally {
    worker?.close();
  }
}

/**
 * Read one log file with the files of its run as {@link analyzeFile} reads it, without analysing it: for callers that
 * need only the NavLog (the command line's Monte Carlo, which computes its own figures from the runs' logs). Throws
 * InputError as analyzeFile does; a log that changed while it was read is read again once (a note says so).
 */
export async function readLogFile(logPath: string, options: AnalyzeFileOptions = {}): Promise<NavLog> {
  assertReadableFile(logPath, 'log');
  const settings = resolveSettings(options.settings);
  const map = readMappingFile(logPath, options.map);
  for (const [file, what] of [[options.anchors, 'anchors file'], [options.reference, 'reference file']] as const) {
    if (file) assertReadableFile(file, what);
  }
  const first = await readMainOnce(logPath, options, settings.memoryBudgetBytes, map);
  return (await readAgainIfChanged(logPath, options, settings, map, first)).log;
}

/**
 * After a read: when the log changed under the reader (truncated, replaced, deleted or rewritten in place) it is read
 * once more from the start (a note in the log says so); a second change, or any read error, is an InputError with one
 * plain line.
 */
async function readAgainIfChanged(logPath: string, options: AnalyzeFileOptions, settings: AnalysisSettings,
  map: { text: string; name: string } | undefined, attempt: MainRead): Promise<MainRead> {
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
  return attempt;
}

/**
 * The parallel half of analyzeFile, after a read without failure: the stages with the errors stage in the worker
 * (analyzeLogParallel) and the hash from the worker (or, when it failed, computed here from the same bytes).
 * Rejects with a FileChangedError when the hash shows the file changed during the read.
 */
async function analyzeReadInParallel(logPath: string, attempt: MainRead, settings: AnalysisSettings, par: ParallelOptions,
  worker: StageWorker | undefined, options: AnalyzeFileOptions, t0: number): Promise<FileAnalysis> {
  const times = options.times;
  if (times) times.read = performance.now() - t0;
  const stats: Partial<ParallelStats> = { hashIn: attempt.hash !== undefined ? 'main' : 'worker' };
  const hash = attempt.hash !== undefined ? Promise.resolve(attempt.hash) : confirmedHash(logPath, attempt, worker, stats);
  // On a copy of the settings: when the hash shows a change, the read again starts from the caller's settings.
  const own = { ...settings };
  const sidecar = sidecarOf(logPath, attempt.log, own, options.notes);
  const info: Promise<SourceInfo> = hash.then((sha256) => ({ sha256, notes: sidecar.notes }));
  const { report } = await analyzeLogParallel(attempt.log, own, info, worker, {
    minEpochs: par.minEpochs, times, stats, mainMs: performance.now() - t0, answerFloorMs: par.answerFloorMs, answerFactor: par.answerFactor,
  });
  if (sidecar.finding) report.findings.push(sidecar.finding);
  return { report, series: [], log: attempt.log, parallel: stats as ParallelStats };
}

/**
 * The worker's hash of the bytes the main thread read, checked; computed here when the worker could not. Checked: the
 * file hashed is the one read (device and inode), and it was not rewritten in place between the main thread's last
 * look and the end of the hash (the hash answer's stamp against the read's, as fileByteSource tells a rewrite).
 */
async function confirmedHash(logPath: string, attempt: MainRead, worker: StageWorker | undefined, stats: Partial<ParallelStats>): Promise<string> {
  let answer: HashAnswer = worker ? checkIdentity(await worker.hash(), logPath, attempt.identity) : { kind: 'failed', message: 'no stage worker' };
  if (answer.kind === 'hash' && answer.bytes !== attempt.bytes) answer = { kind: 'failed', message: `the worker hashed ${answer.bytes} bytes, not ${attempt.bytes}` };
  if (answer.kind === 'failed' || answer.kind === 'abandoned') {
    stats.hashIn = 'main';
    if (worker) stats.hashWhy = answer.kind === 'failed' ? answer.message : 'the worker abandoned the hash';
    answer = hashPrefixNow(logPath, attempt.bytes, attempt.identity);
  }
  if (answer.kind === 'hash') {
    const seen = attempt.stamp;
    if (seen && attempt.identity && rewrittenSince(seen, answer.stamp) && !(await appendSettled(logPath, { ...seen, ...attempt.identity }))) {
      throw new FileChangedError(rewrittenMessage(logPath), 'rewritten');
    }
    return answer.sha256;
  }
  if (answer.kind === 'changed') throw new FileChangedError(answer.message, answer.how);
  throw new InputError(`log cannot be read: ${answer.kind === 'failed' ? answer.message : 'its hash was abandoned'}`);
}

/**
 * Analyse a log read from `logPath` with its notes sidecar (`<log>.notes.json`): the sidecar's notes go into the
 * report, the resets confirmed there (`"reset": true`) split the run like those given in the settings (`--reset-at`),
 * and a sidecar that cannot be read is a finding. `notes` given: those notes instead, and the sidecar is not read.
 * `settings` is changed (its confirmed resets). Shared by {@link analyzeFile} and the live analysis of a growing log.
 */
export function analyzeWithSidecar(logPath: string, log: NavLog, settings: AnalysisSettings, sha256: string,
  notes?: unknown[], times?: StageTimes): FileAnalysis {
  const sidecar = sidecarOf(logPath, log, settings, notes);
  const { report, series } = analyzeLog(log, settings, { sha256, notes: sidecar.notes }, times);
  if (sidecar.finding) report.findings.push(sidecar.finding);
  return { report, series, log };
}

/**
 * The notes for the report (`notes` given, else the sidecar's), the finding of a sidecar that cannot be read, and
 * the sidecar's confirmed resets merged into `settings.confirmedResets_s`.
 */
function sidecarOf(logPath: string, log: NavLog, settings: AnalysisSettings, notes?: unknown[]): { notes?: unknown[]; finding?: Report['findings'][number] } {
  const sidecar = notes === undefined ? notesForReport(logPath, log) : undefined;
  if (sidecar && sidecar.resets.length > 0) settings.confirmedResets_s = mergeResetTimes(settings.confirmedResets_s, sidecar.resets);
  return { notes: notes ?? sidecar?.notes, ...(sidecar?.finding ? { finding: sidecar.finding } : {}) };
}

/** One read of the main log: the log, the hash (when hashed here), the bytes read, the file read, and why it failed. */
interface MainRead {
  log: NavLog;
  /** SHA-256 of the main log's bytes, when hashed on this thread (undefined when a stage worker hashes them). */
  hash?: string;
  /** Bytes of the main log read. */
  bytes: number;
  /** Device and inode of the main log as opened. */
  identity?: FileIdentity;
  /** Times and size of the main log at the read's last look (the state its bytes are of). */
  stamp?: FileStamp;
  failure?: Error;
}

/**
 * One read of the main log and its run. The main log's bytes are hashed here, or, with `progress`, by the stage
 * worker: each chunk's count is published to it, then the total (or abandon, when the read fails).
 */
async function readMainOnce(logPath: string, options: AnalyzeFileOptions, memoryBudgetBytes: number,
  map: { text: string; name: string } | undefined, progress?: HashProgress): Promise<MainRead> {
  const files = options.files;
  const size = statSync(logPath).size;
  const hash = progress ? undefined : createHash('sha256');
  let identity: FileIdentity | undefined;
  let stamp: FileStamp | undefined;
  const raw = fileByteSource(logPath, { // reuse: every consumer below copies what it keeps
    files, reuse: true, rewrites: true,
    onOpen: (st) => { identity = { dev: st.dev, ino: st.ino }; },
    onEnd: (st) => { stamp = stampOf(st); },
  });
  let bytesRead = 0;
  let failure: Error | undefined;
  // The read's profile (--profile, the bench): time this thread waited for the disk, time it hashed, time the reader
  // held the chunks (tokenising and parsing are one pass over the bytes in read/csv.ts and read/jsonShape.ts, so they
  // are timed together), and the assembly after the last chunk (joining the run's files, time checks, the model).
  const clock = (): number => performance.now();
  let io_ms = 0, hash_ms = 0, parse_ms = 0;
  let mainDoneAt = NaN;
  const main: ByteSource = {
    name: logPath,
    size,
    async *chunks(signal?: AbortSignal) {
      try {
        // The iterator by hand (to time the waits); when the reader stops early, return() lets the byte source's
        // `finally` close the file, as a for-await loop would.
        const it = raw.chunks(signal)[Symbol.asyncIterator]();
        let done = false;
        try {
          for (;;) {
            let t = clock();
            const next = await it.next();
            io_ms += clock() - t;
            if (next.done) { done = true; break; }
            const chunk = next.value;
            if (hash) { t = clock(); hash.update(chunk); hash_ms += clock() - t; }
            bytesRead += chunk.byteLength;
            progress?.publish(bytesRead);
            options.onProgress?.(size > 0 ? Math.min(1, bytesRead / size) : 1);
            t = clock();
            yield chunk;
            parse_ms += clock() - t;
          }
        } finally {
          if (!done) await it.return?.();
        }
        mainDoneAt = clock();
        progress?.finish(bytesRead);
      } catch (e) {
        progress?.abandon();
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
    sharedColumns: progress !== undefined, // posting the log to the stage worker then shares its columns
  });
  const times = options.times;
  if (times) {
    times.read ??= 0; // set by the caller; named first so the profile line reads in order
    times['read.io-wait'] = io_ms;
    times['read.tokenize+parse'] = parse_ms;
    if (hash) times['read.hash'] = hash_ms;
    if (Number.isFinite(mainDoneAt)) times['read.assemble'] = clock() - mainDoneAt;
  }
  return { log, ...(hash ? { hash: hash.digest('hex') } : {}), bytes: bytesRead, ...(identity ? { identity } : {}), ...(stamp ? { stamp } : {}), ...(failure ? { failure } : {}) };
}

/** Absolute, normalised form of a user-given path (for messages and the report). */
export function displayPath(p: string): string {
  return path.relative(process.cwd(), path.resolve(p)) || p;
}

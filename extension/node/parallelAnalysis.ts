/**
 * The command line's analysis on two threads. The stage worker (stageWorker.ts, dist/stageWorker.js) is started
 * before the log is read, so its bundle loads while the main thread parses; it hashes the main log meanwhile
 * (prefixHash.ts). Once the log is read, the errors stage (the largest) runs in the worker on the log's columns,
 * which the reader put on SharedArrayBuffers (ReadOptions.sharedColumns), while this thread runs resets, channels,
 * bias and uwb; the report is then assembled from the same parts in the same order (core/analyze.ts), so it is the
 * report of the sequential `analyzeLog`, byte for byte.
 *
 * What crosses threads: the NavLog (plain objects, a Map of columns, typed arrays: all survive structured cloning;
 * shared columns are shared, the few small ones that are not are copied; the reader's diagnostics stay here) and
 * the errors stage's block and findings (plain data). The stage's series are closures and stay behind, so this path
 * is for callers that need only the report. Every failure (no worker file, a worker that cannot start, dies, or
 * answers with an error) falls back to this thread: the analysis is never lost, only slower.
 *
 * A worker that never answers (a hang, an endless loop in the errors stage) is caught by a watchdog: once this thread
 * has finished its own stages, it waits for the worker's answers (the hash and the errors stage) at most
 * {@link answerLimitMs}, then stops the worker and does that work here, with the same report.
 */
import { existsSync } from 'node:fs';
import { Worker } from 'node:worker_threads';
import type { NavLog } from '../core/model';
import type { AnalysisSettings } from '../core/settings';
import {
  assembleReport, prepareAnalysis, runStage, STAGE_ORDER, type AnalysisResult, type ErrorsPart, type SourceInfo,
  type StageParts, type StageTimes,
} from '../core/analyze';
import { HashProgress, type HashAnswer } from './prefixHash';
import type { ErrorsJob, StageWorkerData, StageWorkerMessage } from './stageProtocol';

/** Logs with fewer state epochs run every stage on the main thread (a thread costs more than it saves). */
export const DEFAULT_MIN_PARALLEL_EPOCHS = 20_000;
/** Main logs smaller than this start no stage worker (they cannot hold enough epochs to use it). */
export const DEFAULT_MIN_PARALLEL_BYTES = 2 << 20;
/** The watchdog's least wait for the stage worker's answers after this thread's own stages, ms ({@link answerLimitMs}). */
export const DEFAULT_ANSWER_FLOOR_MS = 10_000;
/** The watchdog's wait as a multiple of this thread's own work on the analysis (read and stages) ({@link answerLimitMs}). */
export const DEFAULT_ANSWER_FACTOR = 10;

/**
 * How long the main thread waits for the stage worker's answers once its own stages are done, ms:
 * max(`floorMs`, `factor` x `mainMs`), `mainMs` being this thread's own work on the analysis so far (the read and its
 * stages, measured). Why that bound: the worker's work grows with the log as the main thread's does, and is smaller.
 * It hashes the bytes the main thread parsed (hashing is cheaper than parsing) and runs one stage where this thread
 * ran four (one `--profile` run of the 250,000-row benchmark log on the shared 2-core development machine: errors
 * 1.1 s in the worker against 1.8 s of read and stages here), and it has been running all the while. So its answers
 * are due by the time this thread is done; ten times this thread's work leaves room for a worker starved of its core.
 * The floor covers small logs, where the worker's start-up (loading its bundle, about 0.15 s of CPU) outweighs the
 * work. A worker stopped too early costs only time: its work is then done on the main thread, the report the same.
 */
export function answerLimitMs(mainMs: number, floorMs = DEFAULT_ANSWER_FLOOR_MS, factor = DEFAULT_ANSWER_FACTOR): number {
  return Math.max(floorMs, factor * mainMs);
}

/** How a caller asks analyzeFile for the two-thread analysis. */
export interface ParallelOptions {
  /** The stage worker's bundle (`dist/stageWorker.js`, beside the CLI's bundle). */
  workerFile: string;
  /** Fewer state epochs than this: every stage on the main thread (default {@link DEFAULT_MIN_PARALLEL_EPOCHS}). */
  minEpochs?: number;
  /** Main log smaller than this many bytes: no worker at all (default {@link DEFAULT_MIN_PARALLEL_BYTES}). */
  minBytes?: number;
  /** The watchdog's floor, ms (default {@link DEFAULT_ANSWER_FLOOR_MS}; see {@link answerLimitMs}). */
  answerFloorMs?: number;
  /** The watchdog's multiple of the main thread's work (default {@link DEFAULT_ANSWER_FACTOR}; see {@link answerLimitMs}). */
  answerFactor?: number;
}

/** Where the work of one analysis ran, for `--profile`. */
export interface ParallelStats {
  /** Where the errors stage ran, and why on the main thread when it did. */
  errorsIn: 'worker' | 'main';
  why?: string;
  /** The errors stage's own time (in the worker, when it ran there), ms. */
  errors_ms: number;
  /** How long the main thread waited for the worker after its own stages, ms. */
  wait_ms: number;
  /** Where the SHA-256 of the main log was computed. */
  hashIn: 'worker' | 'main';
  /** Why the hash was computed on the main thread although the worker was asked for it (it failed or timed out). */
  hashWhy?: string;
}

type ErrorsAnswer = { ok: true; part: ErrorsPart; ms: number } | { ok: false; message: string };

/** The main thread's handle on one stage worker. */
export class StageWorker {
  /** The handshake of the log's hash (publish after each chunk, then finish or abandon). */
  readonly progress: HashProgress | undefined;
  private readonly worker: Worker;
  private dead: string | undefined;
  private readonly hashAnswer: Promise<HashAnswer>;
  private settleHash: (a: HashAnswer) => void = () => undefined;
  private pendingErrors: ((a: ErrorsAnswer) => void) | undefined;

  private constructor(workerFile: string, hashPath: string | undefined) {
    this.progress = hashPath !== undefined ? new HashProgress() : undefined;
    this.hashAnswer = new Promise<HashAnswer>((resolve) => { this.settleHash = resolve; });
    const workerData: StageWorkerData = hashPath !== undefined && this.progress ? { hashPath, control: this.progress.buffer } : {};
    this.worker = new Worker(workerFile, { workerData });
    this.worker.unref(); // never keeps the process alive
    this.worker.on('message', (m: StageWorkerMessage) => {
      if (m.type === 'hash') this.settleHash(m.answer);
      else if (m.type === 'errors') {
        const settle = this.pendingErrors;
        this.pendingErrors = undefined;
        settle?.(m.ok ? { ok: true, part: m.part, ms: m.ms } : { ok: false, message: m.message });
      }
    });
    // A message posted just before the thread failed may arrive after its 'error' event (another port), but Node
    // delivers every message before 'exit': pending answers fail only then, with the first reason recorded.
    const fail = (why: string): void => {
      if (this.dead === undefined) this.dead = why;
    };
    this.worker.on('error', (e: Error) => fail(`the stage worker failed: ${e.message}`));
    this.worker.on('messageerror', (e: Error) => { fail(`a message of the stage worker could not be read: ${e.message}`); this.settleAll(); });
    this.worker.on('exit', (code: number) => { fail(`the stage worker stopped (exit code ${code})`); this.settleAll(); });
  }

  /** Fail every pending answer with the reason the worker is gone (an answer already given stays). */
  private settleAll(): void {
    const why = this.dead ?? 'the stage worker stopped';
    this.settleHash({ kind: 'failed', message: why });
    const settle = this.pendingErrors;
    this.pendingErrors = undefined;
    settle?.({ ok: false, message: why });
  }

  /**
   * Start a stage worker from `workerFile` (which hashes `hashPath` as the main thread reads it, when given).
   * Undefined when the file is missing or the thread cannot be created: the caller then works alone.
   */
  static start(workerFile: string, hashPath?: string): StageWorker | undefined {
    if (!existsSync(workerFile)) return undefined;
    try {
      return new StageWorker(workerFile, hashPath);
    } catch {
      return undefined;
    }
  }

  /** Why the worker is gone, or undefined while it runs. */
  get failure(): string | undefined {
    return this.dead;
  }

  /** The worker's answer about the log's hash (a `failed` answer when it died first). */
  hash(): Promise<HashAnswer> {
    return this.hashAnswer;
  }

  /**
   * Post an errors job (`log` as prepareAnalysis returned it); resolves with the stage's report part or why not.
   * The log's diagnostics stay here (the stage does not read them).
   */
  runErrors(log: NavLog, settings: AnalysisSettings): Promise<ErrorsAnswer> {
    if (this.dead !== undefined) return Promise.resolve({ ok: false, message: this.dead });
    if (this.pendingErrors) return Promise.resolve({ ok: false, message: 'the stage worker is busy' });
    const job: ErrorsJob = { type: 'errors', log: { ...log, diagnostics: [] }, settings };
    return new Promise<ErrorsAnswer>((resolve) => {
      this.pendingErrors = resolve;
      try {
        this.worker.postMessage(job);
      } catch (e) {
        this.pendingErrors = undefined;
        resolve({ ok: false, message: `the log could not be posted to the stage worker: ${e instanceof Error ? e.message : String(e)}` });
      }
    });
  }

  /**
   * Give up on the worker (the watchdog): its pending answers fail at once with `why`, then the thread is stopped
   * (terminate() interrupts even an endless loop).
   */
  abort(why: string): void {
    if (this.dead === undefined) this.dead = why;
    this.settleAll();
    this.close();
  }

  /** Stop the worker (an unfinished hash is abandoned first, so its thread is not left waiting). */
  close(): void {
    this.progress?.abandon();
    if (this.dead === undefined) this.dead = 'the stage worker was closed';
    void this.worker.terminate().catch(() => undefined);
  }
}

/**
 * Analyse a log like core `analyzeLog`, with the errors stage in `worker` (when given, alive and the log has at
 * least `minEpochs` state epochs) while this thread runs the other stages; else every stage here. `info` may be a
 * promise (the log's hash, still being computed): it is awaited just before the report is assembled, and when it
 * rejects, so does this. The report equals `analyzeLog`'s; the series lack the errors stage's when it ran in the
 * worker. `stats` (optional) is filled with where the work ran.
 *
 * The watchdog: once this thread's stages are done, `worker` gets {@link answerLimitMs} of `mainMs` (this thread's
 * work before the call, e.g. the read) plus those stages to answer (`answerFloorMs`, `answerFactor`: its defaults).
 * Past that it is aborted: its pending answers fail (the caller's hash, when `info` waits for it, falls back to this
 * thread) and the errors stage runs here, with the same report; `stats.why` says the worker timed out.
 */
export async function analyzeLogParallel(own: NavLog, settings: AnalysisSettings, info: SourceInfo | Promise<SourceInfo>,
  worker: StageWorker | undefined, options: {
    minEpochs?: number; times?: StageTimes; stats?: Partial<ParallelStats>; mainMs?: number; answerFloorMs?: number; answerFactor?: number;
  } = {}): Promise<AnalysisResult> {
  const { times, stats } = options;
  const sourceInfoP = Promise.resolve(info);
  sourceInfoP.catch(() => undefined); // rejected before it is awaited below: handled there, not an unhandled rejection
  const minEpochs = options.minEpochs ?? DEFAULT_MIN_PARALLEL_EPOCHS;
  const log = prepareAnalysis(own, settings);
  const parts: StageParts = {};
  let why: string | undefined;
  if (!worker) why = 'no stage worker';
  else if (worker.failure !== undefined) why = worker.failure;
  else if (own.state.length < minEpochs) why = `${own.state.length} epochs, fewer than ${minEpochs}`;
  const pending = why === undefined && worker ? worker.runErrors(log, settings) : undefined;
  const stagesAt = performance.now();
  for (const name of STAGE_ORDER) if (name !== 'errors' || !pending) runStage(name, own, log, settings, parts, times);
  const t0 = performance.now();
  // The watchdog (answerLimitMs): armed whenever the worker may still owe an answer (the hash, the errors stage). Its
  // timer keeps the process alive while it waits (the worker itself is unref'd).
  const limit_ms = answerLimitMs((options.mainMs ?? 0) + (t0 - stagesAt), options.answerFloorMs, options.answerFactor);
  const watchdog = worker && worker.failure === undefined
    ? setTimeout(() => worker.abort(`the stage worker did not answer within ${(limit_ms / 1000).toFixed(limit_ms < 1000 ? 3 : 1)} s (timed out) and was stopped`), limit_ms)
    : undefined;
  let sourceInfo: SourceInfo;
  let answer: ErrorsAnswer | undefined;
  try {
    // The hash first: when it shows the file changed, this analysis is thrown away without waiting for the worker.
    sourceInfo = await sourceInfoP;
    answer = pending ? await pending : undefined;
  } finally {
    clearTimeout(watchdog);
  }
  const wait_ms = performance.now() - t0;
  if (answer?.ok) {
    parts.errors = answer.part;
    if (times) times.errors = (times.errors ?? 0) + answer.ms;
  } else if (answer) {
    why = answer.message; // the worker failed: the stage runs here, the report is the same
    runStage('errors', own, log, settings, parts, times);
  }
  if (stats) {
    stats.errorsIn = answer?.ok ? 'worker' : 'main';
    if (why !== undefined) stats.why = why;
    stats.errors_ms = answer?.ok ? answer.ms : times?.errors ?? 0;
    stats.wait_ms = wait_ms;
  }
  return assembleReport(log, settings, sourceInfo, parts, times);
}

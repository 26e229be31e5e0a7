/**
 * Runs analyses in the worker thread (dist/analysisWorker.js): one at a time ({@link runAnalysis}) or a session
 * that keeps the log between runs ({@link AnalysisSession}). Node-only, no
 * `vscode`: the panel wraps it in `window.withProgress`. Cancelling the signal asks the worker to stop and
 * terminates it at once (the worker holds no files open for writing); the promise then rejects with an `AbortError`.
 */
import { Worker } from 'node:worker_threads';
import type { AnyWorkerRequest, CompareRequest, MonteCarloRequest, WorkerCommand, WorkerReply, WorkerRequest, WorkerSessionData } from './analysisWorker';

/** The worker's successful reply. */
export type AnalysisResult = Extract<WorkerReply, { type: 'result' }>;
/** The worker's comparison. */
export type CompareResult = Extract<WorkerReply, { type: 'compare' }>;
/** The worker's Monte Carlo block. */
export type MonteCarloResult = Extract<WorkerReply, { type: 'montecarlo' }>;

/** An analysis that failed; `input` is true for an unreadable input (a plain message for the user). */
export class AnalysisError extends Error {
  constructor(message: string, readonly input: boolean) {
    super(message);
    this.name = 'AnalysisError';
  }
}

/** Analyse `request.path` in a worker started from `workerFile`; `onProgress` gets the fraction read (0..1). */
export function runAnalysis(workerFile: string, request: WorkerRequest, onProgress: (fraction: number) => void, signal?: AbortSignal): Promise<AnalysisResult> {
  return runJob(workerFile, request, 'result', onProgress, signal);
}

/** Compare several runs in a worker (the analyses and the cropped re-analyses all run there). */
export function runComparison(workerFile: string, request: CompareRequest, onProgress: (fraction: number) => void, signal?: AbortSignal): Promise<CompareResult> {
  return runJob(workerFile, request, 'compare', onProgress, signal);
}

/** Check N runs of one scenario together (Monte Carlo NEES and NIS) in a worker. */
export function runMonteCarlo(workerFile: string, request: MonteCarloRequest, onProgress: (fraction: number) => void, signal?: AbortSignal): Promise<MonteCarloResult> {
  return runJob(workerFile, request, 'montecarlo', onProgress, signal);
}

type Success = Exclude<WorkerReply, { type: 'progress' } | { type: 'error' }>;

function runJob<K extends Success['type']>(
  workerFile: string,
  request: AnyWorkerRequest,
  expect: K,
  onProgress: (fraction: number) => void,
  signal?: AbortSignal,
): Promise<Extract<Success, { type: K }>> {
  return new Promise((resolve, reject) => {
    if (signal?.aborted) {
      reject(new DOMException('analysis cancelled', 'AbortError'));
      return;
    }
    const worker = new Worker(workerFile, { workerData: request });
    let settled = false;
    const finish = (fn: () => void): void => {
      if (settled) return;
      settled = true;
      signal?.removeEventListener('abort', onAbort);
      fn();
      void worker.terminate();
    };
    const onAbort = (): void => {
      worker.postMessage({ type: 'cancel' });
      finish(() => reject(new DOMException('analysis cancelled', 'AbortError')));
    };
    signal?.addEventListener('abort', onAbort, { once: true });
    worker.on('message', (reply: WorkerReply) => {
      switch (reply.type) {
        case 'progress':
          if (!settled) onProgress(reply.fraction);
          break;
        case 'error':
          finish(() => reject(new AnalysisError(reply.message, reply.input)));
          break;
        default:
          if (reply.type === expect) finish(() => resolve(reply as Extract<Success, { type: K }>));
          else finish(() => reject(new AnalysisError(`the analysis worker answered '${reply.type}' to a '${expect}' job`, false)));
      }
    });
    worker.on('error', (e) => finish(() => reject(new AnalysisError(`the analysis stopped: ${e.message}`, false))));
    worker.on('exit', (code) => finish(() => reject(new AnalysisError(`the analysis worker exited (code ${code}) without a result`, false))));
  });
}

/**
 * The analysis of one log kept in one worker between runs (a session worker, see analysisWorker.ts): a log that
 * grew is read from the last byte read. Runs go one at a time. Cancelling a run terminates the worker; the next run
 * starts a new one, which reads the log from the start. {@link dispose} ends the worker.
 */
export class AnalysisSession {
  private worker: Worker | undefined;
  private nextId = 1;
  private pending: { id: number; resolve: (r: AnalysisResult) => void; reject: (e: unknown) => void; onProgress: (f: number) => void } | undefined;

  /** A session for `request` in workers started from `workerFile`. Nothing starts before the first {@link run}. */
  constructor(private readonly workerFile: string, readonly request: WorkerRequest) {}

  /** Read what changed and analyse; `onProgress` gets the fraction of this run's bytes read (0..1). */
  run(onProgress: (fraction: number) => void, signal?: AbortSignal): Promise<AnalysisResult> {
    if (signal?.aborted) return Promise.reject(new DOMException('analysis cancelled', 'AbortError'));
    if (this.pending) return Promise.reject(new Error('an analysis of this log is already running'));
    const worker = this.ensureWorker();
    const id = this.nextId++;
    return new Promise<AnalysisResult>((resolve, reject) => {
      const onAbort = (): void => {
        this.fail(new DOMException('analysis cancelled', 'AbortError'));
        this.stopWorker();
      };
      signal?.addEventListener('abort', onAbort, { once: true });
      const done = <T>(fn: (v: T) => void) => (v: T): void => {
        signal?.removeEventListener('abort', onAbort);
        fn(v);
      };
      this.pending = { id, resolve: done(resolve), reject: done(reject), onProgress };
      worker.postMessage({ type: 'run', id } satisfies WorkerCommand);
    });
  }

  /** End the worker (a run in progress rejects with an AbortError). */
  dispose(): void {
    this.fail(new DOMException('analysis cancelled', 'AbortError'));
    this.stopWorker();
  }

  private ensureWorker(): Worker {
    if (this.worker) return this.worker;
    const worker = new Worker(this.workerFile, { workerData: { session: this.request } satisfies WorkerSessionData });
    worker.on('message', (reply: WorkerReply) => {
      const p = this.pending;
      // A session answers only 'progress', 'result' and 'error', each with the id of its run.
      if (!p || this.worker !== worker || !('id' in reply) || reply.id !== p.id) return;
      switch (reply.type) {
        case 'progress':
          p.onProgress(reply.fraction);
          break;
        case 'result':
          this.pending = undefined;
          p.resolve(reply);
          break;
        case 'error':
          this.pending = undefined;
          p.reject(new AnalysisError(reply.message, reply.input));
          break;
      }
    });
    // Events of a worker already replaced (terminated after a cancel) concern no pending run.
    worker.on('error', (e) => {
      if (this.worker !== worker) return;
      this.fail(new AnalysisError(`the analysis stopped: ${e.message}`, false));
      this.stopWorker();
    });
    worker.on('exit', (code) => {
      if (this.worker !== worker) return;
      this.worker = undefined;
      this.fail(new AnalysisError(`the analysis worker exited (code ${code}) without a result`, false));
    });
    this.worker = worker;
    return worker;
  }

  private fail(e: unknown): void {
    const p = this.pending;
    this.pending = undefined;
    p?.reject(e);
  }

  private stopWorker(): void {
    const w = this.worker;
    this.worker = undefined;
    if (w) void w.terminate();
  }
}

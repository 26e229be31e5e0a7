/**
 * Runs one analysis in the worker thread (dist/analysisWorker.js) and resolves with its result. Node-only, no
 * `vscode`: the panel wraps it in `window.withProgress`. Cancelling the signal asks the worker to stop and
 * terminates it at once (the worker holds no files open for writing); the promise then rejects with an `AbortError`.
 */
import { Worker } from 'node:worker_threads';
import type { AnyWorkerRequest, CompareRequest, MonteCarloRequest, WorkerReply, WorkerRequest } from './analysisWorker';

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

/**
 * Runs one analysis in the worker thread (dist/analysisWorker.js) and resolves with its result. Node-only, no
 * `vscode`: the panel wraps it in `window.withProgress`. Cancelling the signal asks the worker to stop and
 * terminates it at once (the worker holds no files open for writing); the promise then rejects with an `AbortError`.
 */
import { Worker } from 'node:worker_threads';
import type { WorkerReply, WorkerRequest } from './analysisWorker';

/** The worker's successful reply. */
export type AnalysisResult = Extract<WorkerReply, { type: 'result' }>;

/** An analysis that failed; `input` is true for an unreadable input (a plain message for the user). */
export class AnalysisError extends Error {
  constructor(message: string, readonly input: boolean) {
    super(message);
    this.name = 'AnalysisError';
  }
}

/** Analyse `request.path` in a worker started from `workerFile`; `onProgress` gets the fraction read (0..1). */
export function runAnalysis(workerFile: string, request: WorkerRequest, onProgress: (fraction: number) => void, signal?: AbortSignal): Promise<AnalysisResult> {
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
        case 'result':
          finish(() => resolve(reply));
          break;
        case 'error':
          finish(() => reject(new AnalysisError(reply.message, reply.input)));
          break;
      }
    });
    worker.on('error', (e) => finish(() => reject(new AnalysisError(`the analysis stopped: ${e.message}`, false))));
    worker.on('exit', (code) => finish(() => reject(new AnalysisError(`the analysis worker exited (code ${code}) without a result`, false))));
  });
}

/**
 * The command line's stage worker (built to dist/stageWorker.js; parallelAnalysis.ts starts it before the log is
 * read). First it hashes the main log as far as the main thread has parsed it (prefixHash.ts) and posts the SHA-256;
 * then it answers `errors` jobs: the errors stage of the core on a log whose columns are SharedArrayBuffers (posting
 * shares them, nothing is copied). Only the stage's report part goes back: its series are closures over this thread.
 * It imports the errors stage alone, so the bundle stays small and loads while the main thread parses.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { analyzeErrors } from '../core/errors/index';
import { emptyScratch } from '../core/scratch';
import { hashWhileRead } from './prefixHash';
import type { ErrorsJob, StageWorkerData, StageWorkerMessage } from './stageProtocol';

function post(message: StageWorkerMessage): void {
  parentPort?.postMessage(message);
}

function runErrors(job: ErrorsJob): void {
  try {
    const t0 = performance.now();
    emptyScratch();
    const out = analyzeErrors(job.log, job.settings);
    emptyScratch();
    post({ type: 'errors', ok: true, part: { block: out.block, findings: out.findings }, ms: performance.now() - t0 });
  } catch (e) {
    // analyzeErrors catches its own failures (a note finding); this is a part that cannot be posted (DataCloneError)
    post({ type: 'errors', ok: false, message: e instanceof Error ? e.message : String(e) });
  }
}

const data = (workerData ?? {}) as StageWorkerData;
parentPort?.on('message', (m: ErrorsJob) => {
  if (m && m.type === 'errors') runErrors(m);
});
if (data.hashPath !== undefined && data.control) post({ type: 'hash', answer: hashWhileRead(data.hashPath, data.control) });

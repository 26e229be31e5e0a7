/**
 * Messages between the command line's main thread and its stage worker (stageWorker.ts, built to
 * dist/stageWorker.js): the worker hashes the main log while the main thread parses it, then runs the errors stage
 * on the shared columns while the main thread runs the other stages (parallelAnalysis.ts).
 */
import type { NavLog } from '../core/model';
import type { AnalysisSettings } from '../core/settings';
import type { ErrorsPart } from '../core/analyze';
import type { HashAnswer } from './prefixHash';

/** `workerData` of the stage worker: the file to hash and the handshake's shared buffer (prefixHash.ts). */
export interface StageWorkerData {
  hashPath?: string;
  control?: SharedArrayBuffer;
}

/** Main thread -> worker: run the errors stage on `log` (already with the confirmed resets; columns shared). */
export interface ErrorsJob {
  type: 'errors';
  log: NavLog;
  settings: AnalysisSettings;
}

/** Worker -> main thread. */
export type StageWorkerMessage =
  | { type: 'hash'; answer: HashAnswer }
  | { type: 'errors'; ok: true; part: ErrorsPart; ms: number }
  | { type: 'errors'; ok: false; message: string };

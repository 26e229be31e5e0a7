/**
 * Worker thread entry (bundled to dist/analysisWorker.js): runs `analyzeFile` off the extension host's thread so
 * the editor never freezes on a large log. It posts progress (at most once per percent) and one result or error;
 * the columns of the series are transferred, not copied. Cancellation: the host posts `{ type: 'cancel' }`, which
 * aborts the reader; the host terminates the worker if it does not stop promptly.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { analyzeFile, InputError } from '../node/analyzeFile';
import type { AnalysisSettings } from '../core/settings';
import type { Diagnostic } from '../core/model';
import type { Report } from '../core/report';
import type { Series } from '../core/series';

/** What the host asks the worker to analyse. */
export interface WorkerRequest {
  path: string;
  map?: string;
  anchors?: string;
  reference?: string;
  settings?: Partial<AnalysisSettings>;
}

/** What the worker posts back. */
export type WorkerReply =
  | { type: 'progress'; fraction: number }
  | { type: 'result'; report: Report; series: Series[]; diagnostics: Diagnostic[]; files: string[] }
  | { type: 'error'; message: string; input: boolean };

/** The distinct ArrayBuffers behind a run's series (a buffer may back several columns; each is listed once). */
export function seriesBuffers(series: readonly Series[]): ArrayBuffer[] {
  const set = new Set<ArrayBuffer>();
  for (const s of series) {
    for (const a of [s.x, s.y, s.lo, s.hi, s.line]) if (a && a.buffer instanceof ArrayBuffer) set.add(a.buffer);
  }
  return [...set];
}

async function main(): Promise<void> {
  const port = parentPort;
  if (!port) return;
  const request = workerData as WorkerRequest;
  const controller = new AbortController();
  port.on('message', (m: unknown) => {
    if (typeof m === 'object' && m !== null && (m as { type?: unknown }).type === 'cancel') controller.abort();
  });
  let lastPercent = -1;
  try {
    const { report, series, log } = await analyzeFile(request.path, {
      map: request.map,
      anchors: request.anchors,
      reference: request.reference,
      settings: request.settings,
      signal: controller.signal,
      onProgress: (fraction) => {
        const percent = Math.floor(fraction * 100);
        if (percent === lastPercent) return;
        lastPercent = percent;
        port.postMessage({ type: 'progress', fraction } satisfies WorkerReply);
      },
    });
    const reply: WorkerReply = { type: 'result', report, series, diagnostics: log.diagnostics, files: log.files };
    port.postMessage(reply, seriesBuffers(series));
  } catch (e) {
    const reply: WorkerReply = { type: 'error', message: e instanceof Error ? e.message : String(e), input: e instanceof InputError };
    port.postMessage(reply);
  }
}

void main();

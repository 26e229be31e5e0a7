/**
 * Worker thread entry (bundled to dist/analysisWorker.js): runs the analysis off the extension host's thread so the
 * editor never freezes on a large log. Two ways to use it:
 *
 * - One job (`workerData` is an {@link AnyWorkerRequest}): analyse the log once, post the result or error, end. The
 *   columns of the series are transferred, not copied. Two more jobs run this way for the same reason: a comparison
 *   of several runs (`kind: 'compare'`, core/compareRuns.ts) and a Monte Carlo check over N runs
 *   (`kind: 'montecarlo'`, core/errors/montecarlo.ts); their progress is the share of the runs read.
 * - A session (`workerData` is `{ session: request }`): the worker keeps a {@link LiveAnalysis} of the log between
 *   runs, so a log that grew is read from the last byte read (see extension/node/liveAnalysis.ts). The host posts
 *   `{ type: 'run', id }` for each run; every reply carries that id. Columns the worker keeps (the log read so far)
 *   are copied into the reply; the rest are transferred.
 *
 * Both post progress (at most once per percent). Cancellation: the host posts `{ type: 'cancel' }`, which aborts a
 * whole read; the host terminates the worker if it does not stop promptly (a session then starts afresh).
 */
import { parentPort, workerData } from 'node:worker_threads';
import { analyzeFile, InputError, readLogFile } from '../node/analyzeFile';
import { LiveAnalysis, type ReadInfo } from '../node/liveAnalysis';
import { resolveSettings, type AnalysisSettings } from '../core/settings';
import { compareRuns, type Comparison } from '../core/compareRuns';
import type { AlignMode } from '../core/compare';
import { analyzeMonteCarlo, type MonteCarloBlock } from '../core/errors/montecarlo';
import type { Diagnostic, NavLog } from '../core/model';
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

/** Several runs compared on their common span (the first is the panel's log). */
export interface CompareRequest {
  kind: 'compare';
  paths: string[];
  align: AlignMode;
  /** Mapping file for every run (default: each run's own `<log>.map.json`). */
  map?: string;
  settings?: Partial<AnalysisSettings>;
}

/** N runs of one scenario checked together (Monte Carlo NEES and NIS). */
export interface MonteCarloRequest {
  kind: 'montecarlo';
  paths: string[];
  map?: string;
  settings?: Partial<AnalysisSettings>;
}

/** Any job the worker takes. */
export type AnyWorkerRequest = WorkerRequest | CompareRequest | MonteCarloRequest;

/** The `workerData` of a session worker. */
export interface WorkerSessionData {
  session: WorkerRequest;
}

/** What the host posts to a session worker. */
export type WorkerCommand = { type: 'run'; id: number } | { type: 'cancel' };

/** What the worker posts back (`id`: the run it answers, in a session). */
export type WorkerReply =
  | { type: 'progress'; fraction: number; id?: number }
  | { type: 'result'; report: Report; series: Series[]; diagnostics: Diagnostic[]; files: string[]; read?: ReadInfo; id?: number }
  | { type: 'compare'; comparison: Comparison; eventKinds: string[] }
  | { type: 'montecarlo'; block: MonteCarloBlock }
  | { type: 'error'; message: string; input: boolean; id?: number };

/** The distinct ArrayBuffers behind a run's series (a buffer may back several columns; each is listed once). */
export function seriesBuffers(series: readonly Series[]): ArrayBuffer[] {
  const set = new Set<ArrayBuffer>();
  for (const s of series) {
    for (const a of [s.x, s.y, s.lo, s.hi, s.line]) if (a && a.buffer instanceof ArrayBuffer) set.add(a.buffer);
  }
  return [...set];
}

/** Finding kinds present in every report (the choices of an event alignment), sorted. */
export function commonFindingKinds(reports: readonly Report[]): string[] {
  if (reports.length === 0) return [];
  const sets = reports.map((r) => new Set(r.findings.filter((f) => f.t !== undefined).map((f) => f.kind as string)));
  return [...sets[0]].filter((k) => sets.every((s) => s.has(k))).sort();
}

/**
 * `each` of the paths in turn (an analysis, or only a read); progress is the share of the runs done, `each` telling
 * its own share of one run through the callback it gets.
 */
async function eachRun<T>(paths: string[], each: (path: string, onProgress: (f: number) => void) => Promise<T>, progress: (f: number) => void): Promise<T[]> {
  const out: T[] = [];
  for (const [i, p] of paths.entries()) out.push(await each(p, (f) => progress((i + f) / paths.length)));
  return out;
}

/**
 * The ArrayBuffers behind every typed array reachable from `root` (a NavLog: Maps, arrays, plain objects). Used to
 * tell which series columns are views of the log a session keeps, and so must be copied rather than transferred.
 */
export function reachableBuffers(root: unknown): Set<ArrayBufferLike> {
  const out = new Set<ArrayBufferLike>();
  const seen = new Set<object>();
  const stack: unknown[] = [root];
  while (stack.length > 0) {
    const v = stack.pop();
    if (typeof v !== 'object' || v === null || seen.has(v)) continue;
    seen.add(v);
    if (ArrayBuffer.isView(v)) out.add(v.buffer);
    else if (v instanceof Map) for (const x of v.values()) stack.push(x);
    else if (Array.isArray(v)) {
      // Arrays of numbers or strings hold no buffers: look at the first element only for those.
      if (v.length > 0 && typeof v[0] !== 'object') continue;
      for (const x of v) stack.push(x);
    } else for (const x of Object.values(v)) stack.push(x);
  }
  return out;
}

/** The plain ArrayBuffers of a set (SharedArrayBuffers are shared, never transferred). */
function transferable(buffers: ReadonlySet<ArrayBufferLike>): ArrayBuffer[] {
  return [...buffers].filter((b): b is ArrayBuffer => b instanceof ArrayBuffer);
}

/**
 * Series whose columns share no buffer with `kept` (columns that do are copied), and the buffers to transfer.
 * A session keeps the log's columns for the next run; transferring them would detach them in the worker.
 */
export function detachSeries(series: readonly Series[], kept: ReadonlySet<ArrayBufferLike>): { series: Series[]; transfer: ArrayBuffer[] } {
  // Also copied: a view that covers under half of its buffer (a column cut from a slab, core/columnAlloc.ts, or from
  // the reader's one block per stream): transferring the buffer would detach its neighbours and ship them along.
  const copy = (a: Float64Array | undefined): Float64Array | undefined =>
    (a && (kept.has(a.buffer) || a.byteLength * 2 < a.buffer.byteLength) ? a.slice() : a);
  const out = series.map((s) => {
    const d: Series = { ...s, x: copy(s.x) as Float64Array, y: copy(s.y) as Float64Array };
    if (s.lo) d.lo = copy(s.lo);
    if (s.hi) d.hi = copy(s.hi);
    if (s.line) d.line = copy(s.line);
    return d;
  });
  return { series: out, transfer: seriesBuffers(out) };
}

function errorReply(e: unknown, id?: number): WorkerReply {
  const reply: WorkerReply = { type: 'error', message: e instanceof Error ? e.message : String(e), input: e instanceof InputError };
  if (id !== undefined) reply.id = id;
  return reply;
}

function progressReporter(post: (r: WorkerReply) => void, id?: number): (fraction: number) => void {
  let lastPercent = -1;
  return (fraction) => {
    const percent = Math.floor(fraction * 100);
    if (percent === lastPercent) return;
    lastPercent = percent;
    post(id === undefined ? { type: 'progress', fraction } : { type: 'progress', fraction, id });
  };
}

async function runOnce(port: NonNullable<typeof parentPort>, request: AnyWorkerRequest): Promise<void> {
  const controller = new AbortController();
  port.on('message', (m: unknown) => {
    if (typeof m === 'object' && m !== null && (m as { type?: unknown }).type === 'cancel') controller.abort();
  });
  const progress = progressReporter((r) => port.postMessage(r));
  try {
    if ('kind' in request && request.kind === 'compare') {
      const { map, settings: given } = request;
      const runs = await eachRun(request.paths, (p, onProgress) => analyzeFile(p, { map, settings: given, signal: controller.signal, onProgress }), progress);
      const settings = runs.map((r) => resolveSettings({ ...request.settings, ...(typeof r.report.settings.map === 'string' ? { map: r.report.settings.map } : {}) }));
      const result = compareRuns(runs, settings, request.align);
      if (!result.ok) throw new InputError(`cannot compare: ${result.message}`);
      port.postMessage({ type: 'compare', comparison: result.comparison, eventKinds: commonFindingKinds(runs.map((r) => r.report)) } satisfies WorkerReply);
      return;
    }
    if ('kind' in request && request.kind === 'montecarlo') {
      // only the logs: the N-run figures come from their columns, not from each run's own analysis
      const { map, settings } = request;
      const logs = await eachRun(request.paths, (p, onProgress) => readLogFile(p, { map, settings, signal: controller.signal, onProgress }), progress);
      const block = analyzeMonteCarlo(logs, resolveSettings(request.settings));
      port.postMessage({ type: 'montecarlo', block } satisfies WorkerReply, transferable(reachableBuffers(block)));
      return;
    }
    const { report, series, log } = await analyzeFile(request.path, {
      map: request.map,
      anchors: request.anchors,
      reference: request.reference,
      settings: request.settings,
      signal: controller.signal,
      onProgress: progress,
    });
    const reply: WorkerReply = { type: 'result', report, series, diagnostics: log.diagnostics, files: log.files };
    port.postMessage(reply, seriesBuffers(series));
  } catch (e) {
    port.postMessage(errorReply(e));
  }
}

function runSession(port: NonNullable<typeof parentPort>, request: WorkerRequest): void {
  const live = new LiveAnalysis(request.path, { map: request.map, anchors: request.anchors, reference: request.reference, settings: request.settings });
  let controller: AbortController | undefined;
  // Runs one after another: a run asked for while one is going waits for it (the host sends one at a time anyway).
  let queue: Promise<void> = Promise.resolve();
  port.on('message', (m: unknown) => {
    if (typeof m !== 'object' || m === null) return;
    const cmd = m as Partial<WorkerCommand>;
    if (cmd.type === 'cancel') {
      controller?.abort();
      return;
    }
    if (cmd.type !== 'run' || typeof (cmd as { id?: unknown }).id !== 'number') return;
    const id = (cmd as { id: number }).id;
    queue = queue.then(async () => {
      controller = new AbortController();
      try {
        const r = await live.run({ signal: controller.signal, onProgress: progressReporter((x) => port.postMessage(x), id) });
        const { series, transfer } = detachSeries(r.series, r.read.mode === 'tail' ? reachableBuffers(r.log satisfies NavLog) : new Set());
        const reply: WorkerReply = { type: 'result', report: r.report, series, diagnostics: r.log.diagnostics, files: r.log.files, read: r.read, id };
        port.postMessage(reply, transfer);
      } catch (e) {
        port.postMessage(errorReply(e, id));
      }
    });
  });
}

function main(): void {
  const port = parentPort;
  if (!port) return;
  const data = workerData as AnyWorkerRequest | WorkerSessionData;
  if ('session' in data) runSession(port, data.session);
  else void runOnce(port, data);
}

main();

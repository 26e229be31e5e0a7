/**
 * Worker thread entry (bundled to dist/analysisWorker.js): runs `analyzeFile` off the extension host's thread so
 * the editor never freezes on a large log. Two more jobs run here for the same reason: a comparison of several runs
 * (`kind: 'compare'`, core/compareRuns.ts) and a Monte Carlo check over N runs (`kind: 'montecarlo'`,
 * core/errors/montecarlo.ts); their progress is the share of the runs read. It posts progress (at most once per percent) and one result or error;
 * the columns of the series are transferred, not copied. Cancellation: the host posts `{ type: 'cancel' }`, which
 * aborts the reader; the host terminates the worker if it does not stop promptly.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { analyzeFile, InputError, type FileAnalysis } from '../node/analyzeFile';
import { resolveSettings, type AnalysisSettings } from '../core/settings';
import { compareRuns, type Comparison } from '../core/compareRuns';
import type { AlignMode } from '../core/compare';
import { analyzeMonteCarlo, type MonteCarloBlock } from '../core/errors/montecarlo';
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

/** What the worker posts back. */
export type WorkerReply =
  | { type: 'progress'; fraction: number }
  | { type: 'result'; report: Report; series: Series[]; diagnostics: Diagnostic[]; files: string[] }
  | { type: 'compare'; comparison: Comparison; eventKinds: string[] }
  | { type: 'montecarlo'; block: MonteCarloBlock }
  | { type: 'error'; message: string; input: boolean };

/** The distinct ArrayBuffers behind a run's series (a buffer may back several columns; each is listed once). */
export function seriesBuffers(series: readonly Series[]): ArrayBuffer[] {
  const set = new Set<ArrayBuffer>();
  for (const s of series) {
    for (const a of [s.x, s.y, s.lo, s.hi, s.line]) if (a && a.buffer instanceof ArrayBuffer) set.add(a.buffer);
  }
  return [...set];
}

/** The distinct ArrayBuffers behind a Monte Carlo block's columns. */
export function monteCarloBuffers(block: MonteCarloBlock): ArrayBuffer[] {
  const set = new Set<ArrayBuffer>();
  for (const m of [...Object.values(block.nees), ...Object.values(block.nis)]) {
    if (!m) continue;
    for (const a of [m.t, m.average, m.runs, m.lo, m.hi]) if (a.buffer instanceof ArrayBuffer) set.add(a.buffer);
  }
  return [...set];
}

/** Finding kinds present in every report (the choices of an event alignment), sorted. */
export function commonFindingKinds(reports: readonly Report[]): string[] {
  if (reports.length === 0) return [];
  const sets = reports.map((r) => new Set(r.findings.filter((f) => f.t !== undefined).map((f) => f.kind as string)));
  return [...sets[0]].filter((k) => sets.every((s) => s.has(k))).sort();
}

/** Analyse each path in turn; progress is the share of the runs read. */
async function analyseAll(paths: string[], map: string | undefined, settings: Partial<AnalysisSettings> | undefined, signal: AbortSignal, progress: (f: number) => void): Promise<FileAnalysis[]> {
  const out: FileAnalysis[] = [];
  for (const [i, p] of paths.entries()) {
    out.push(await analyzeFile(p, { map, settings, signal, onProgress: (f) => progress((i + f) / paths.length) }));
  }
  return out;
}

async function main(): Promise<void> {
  const port = parentPort;
  if (!port) return;
  const request = workerData as AnyWorkerRequest;
  const controller = new AbortController();
  port.on('message', (m: unknown) => {
    if (typeof m === 'object' && m !== null && (m as { type?: unknown }).type === 'cancel') controller.abort();
  });
  let lastPercent = -1;
  const progress = (fraction: number): void => {
    const percent = Math.floor(fraction * 100);
    if (percent === lastPercent) return;
    lastPercent = percent;
    port.postMessage({ type: 'progress', fraction } satisfies WorkerReply);
  };
  try {
    if ('kind' in request && request.kind === 'compare') {
      const runs = await analyseAll(request.paths, request.map, request.settings, controller.signal, progress);
      const settings = runs.map((r) => resolveSettings({ ...request.settings, ...(typeof r.report.settings.map === 'string' ? { map: r.report.settings.map } : {}) }));
      const result = compareRuns(runs, settings, request.align);
      if (!result.ok) throw new InputError(`cannot compare: ${result.message}`);
      port.postMessage({ type: 'compare', comparison: result.comparison, eventKinds: commonFindingKinds(runs.map((r) => r.report)) } satisfies WorkerReply);
      return;
    }
    if ('kind' in request && request.kind === 'montecarlo') {
      const runs = await analyseAll(request.paths, request.map, request.settings, controller.signal, progress);
      const block = analyzeMonteCarlo(runs.map((r) => r.log), resolveSettings(request.settings));
      port.postMessage({ type: 'montecarlo', block } satisfies WorkerReply, monteCarloBuffers(block));
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
    const reply: WorkerReply = { type: 'error', message: e instanceof Error ? e.message : String(e), input: e instanceof InputError };
    port.postMessage(reply);
  }
}

void main();

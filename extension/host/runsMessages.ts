/**
 * The panel's messages of the views built from several runs, made from the worker's results: the compare view
 * (core/compareRuns.ts `Comparison`) and the Monte Carlo view (core/errors/montecarlo.ts `MonteCarloBlock`).
 * Pure (no `vscode`), so it is unit-tested in node. File names only ever leave as base names; columns leave as
 * exact-size float64 `ArrayBuffer`s (protocol.ts conventions), the Monte Carlo curves as a min/max envelope.
 */
import * as path from 'node:path';
import type { Comparison } from '../core/compareRuns';
import type { MonteCarloBlock, MonteCarloSeries } from '../core/errors/montecarlo';
import { envelope } from '../core/envelope';
import type { CompareAlign, CompareUpdateMessage, MonteCarloSeriesInfo, MonteCarloUpdateMessage } from '../protocol';
import { runLabel } from '../core/compare';

/** Buckets of a Monte Carlo curve's envelope (about one per pixel column of a wide panel). */
export const MONTE_CARLO_BUCKETS = 1200;

/** An exact-size ArrayBuffer holding a copy of `a`. */
function buffer(a: Float64Array): ArrayBuffer {
  return a.slice().buffer as ArrayBuffer;
}

/** The compare view's message of a finished comparison. */
export function compareReadyMessage(c: Comparison, eventKinds: string[], focus: boolean): CompareUpdateMessage {
  return {
    type: 'compare/update',
    state: 'ready',
    align: c.align,
    eventKinds,
    runs: c.runs.map((r) => ({
      label: r.label,
      name: path.basename(r.path),
      ...(r.sha256 ? { sha256: r.sha256 } : {}),
      offset_s: r.offset_s,
      window: r.window,
      cropped: r.cropped,
    })),
    span: { start: c.span.start, end: c.span.end },
    figures: c.figures,
    overlays: c.overlays,
    ...(focus ? { focus } : {}),
  };
}

/** The compare view's message while no comparison is shown: empty, loading or failed (runs named by file). */
export function compareStateMessage(state: 'empty' | 'loading' | 'error', files: string[], align: CompareAlign, message?: string, focus = false): CompareUpdateMessage {
  return {
    type: 'compare/update',
    state,
    ...(message !== undefined ? { message } : {}),
    align,
    eventKinds: [],
    runs: files.map((f, i) => ({ label: runLabel(i), name: path.basename(f), offset_s: 0, window: [NaN, NaN], cropped: false })),
    figures: [],
    overlays: [],
    ...(focus ? { focus } : {}),
  };
}

function seriesInfo(kind: 'nees' | 'nis', name: string, m: MonteCarloSeries, buckets: number): MonteCarloSeriesInfo | undefined {
  const n = m.t.length;
  if (n === 0) return undefined;
  const env = envelope({ x: m.t, y: m.average, lo: m.lo, hi: m.hi }, m.t[0], m.t[n - 1], buckets);
  const lo = env.lo ?? new Float64Array(env.x.length).fill(NaN);
  const hi = env.hi ?? new Float64Array(env.x.length).fill(NaN);
  return {
    key: `montecarlo/${kind}/${name}`,
    kind,
    name,
    dof: m.dof,
    epochs: m.epochs,
    ...(m.mean !== undefined ? { mean: m.mean } : {}),
    ...(m.inside95 !== undefined ? { inside95: m.inside95 } : {}),
    ...(m.bounds95 ? { bounds95: m.bounds95 } : {}),
    x: buffer(env.x),
    y: buffer(env.y),
    lo: buffer(lo),
    hi: buffer(hi),
  };
}

/** The Monte Carlo view's message of a finished check: NEES blocks first, then NIS channels. */
export function monteCarloReadyMessage(block: MonteCarloBlock, files: string[], focus: boolean, buckets = MONTE_CARLO_BUCKETS): MonteCarloUpdateMessage {
  const series: MonteCarloSeriesInfo[] = [];
  for (const [name, m] of Object.entries(block.nees)) {
    const s = m ? seriesInfo('nees', name, m, buckets) : undefined;
    if (s) series.push(s);
  }
  for (const [name, m] of Object.entries(block.nis)) {
    const s = seriesInfo('nis', name, m, buckets);
    if (s) series.push(s);
  }
  return {
    type: 'montecarlo/update',
    state: 'ready',
    files: files.map((f) => path.basename(f)),
    runs: block.runs,
    series,
    notes: block.notes,
    ...(focus ? { focus } : {}),
  };
}

/** The Monte Carlo view's message while nothing is shown: empty, loading or failed. */
export function monteCarloStateMessage(state: 'empty' | 'loading' | 'error', files: string[], message?: string, focus = false): MonteCarloUpdateMessage {
  return {
    type: 'montecarlo/update',
    state,
    ...(message !== undefined ? { message } : {}),
    files: files.map((f) => path.basename(f)),
    runs: files.length,
    series: [],
    notes: [],
    ...(focus ? { focus } : {}),
  };
}

/** Log file extensions a folder of runs is searched for (mapping, notes, report and gate files are not runs). */
const LOG_EXTENSIONS = ['.csv', '.jsonl', '.ndjson', '.json'];
const NOT_LOGS = ['.map.json', '.notes.json', '.report.json', '.gate.json'];

/** Whether a file name is a log a folder of runs stands for. */
export function isRunLog(name: string): boolean {
  const n = name.toLowerCase();
  return LOG_EXTENSIONS.some((e) => n.endsWith(e)) && !NOT_LOGS.some((e) => n.endsWith(e));
}

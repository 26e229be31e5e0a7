/**
 * Comparison of analysed runs on their common span: align (compare.ts), intersect the spans, re-analyse each run
 * cropped to its own-time window of the common span (crop.ts) when it reaches beyond it, then compare the figures
 * and build the overlays. Pure: the callers (CLI, host) read the files and analyse them first.
 */
import type { NavLog } from './model';
import type { Report } from './report';
import type { Series } from './series';
import type { AnalysisSettings } from './settings';
import { analyzeLog } from './analyze';
import { cropLog } from './crop';
import {
  alignmentOffsets,
  commonSpan,
  compareReports,
  overlays,
  runLabel,
  runWindow,
  type AlignMode,
  type ComparedFigure,
  type Overlay,
  type Span,
} from './compare';

/** Schema identifier of the comparison JSON (`compare --json`). */
export const COMPARISON_SCHEMA = 'residuum.compare/1';

/** One analysed run as the callers have it. */
export interface AnalysedRun {
  report: Report;
  series: Series[];
  log: NavLog;
}

/** One run of a comparison. */
export interface ComparedRun {
  /** A, B, C ... */
  label: string;
  path: string;
  sha256?: string;
  /** Log time of common time 0, seconds. */
  offset_s: number;
  /** The run's own-time window of the common span, seconds. */
  window: [number, number];
  /** The run's whole state-time span, seconds (own time). */
  fullSpan?: [number, number];
  /** True when the run reaches beyond the common span and was re-analysed on it. */
  cropped: boolean;
}

/** The whole comparison (what `compare --json` prints, with the runs' reports on the common span). */
export interface Comparison {
  schema: typeof COMPARISON_SCHEMA;
  tool: { version: string };
  align: AlignMode;
  /** The common span on the common axis, seconds. */
  span: Span;
  runs: ComparedRun[];
  figures: ComparedFigure[];
  overlays: Overlay[];
  /** Each run's report on the common span (the figures come from these). */
  reports: Report[];
}

/** A comparison, or a plain sentence saying why the runs cannot be compared. */
export type ComparisonResult = { ok: true; comparison: Comparison; series: Series[][] } | { ok: false; message: string };

/**
 * Compare analysed runs (two or more) aligned by `align`, on their common span.
 * @param settingsPerRun the resolved settings each run was analysed with (used again for the cropped analysis)
 * @param buckets overlay envelope buckets per curve
 */
export function compareRuns(runs: AnalysedRun[], settingsPerRun: AnalysisSettings[], align: AlignMode, buckets = 600): ComparisonResult {
  if (runs.length < 2) return { ok: false, message: `compare needs two or more runs, got ${runs.length}` };
  const full = runs.map((r) => r.report);
  const aligned = alignmentOffsets(full, align);
  if (!aligned.ok) return aligned;
  const offsets = aligned.offsets_s;
  const span = commonSpan(full, offsets);
  if (!span) {
    const spans = full.map((r, i) => `${runLabel(i)} ${r.time.start ?? '?'}..${r.time.end ?? '?'} s`).join(', ');
    return { ok: false, message: `the runs share no common time span after aligning by ${alignName(align)} (${spans})` };
  }
  const reports: Report[] = [];
  const series: Series[][] = [];
  const compared: ComparedRun[] = [];
  runs.forEach((run, i) => {
    const window = runWindow(span, offsets[i]);
    const t = run.report.time;
    const tol = 1e-9 * Math.max(1, Math.abs(window[0]), Math.abs(window[1]));
    const inside = t.start !== undefined && t.end !== undefined && t.start >= window[0] - tol && t.end <= window[1] + tol;
    if (inside) {
      reports.push(run.report);
      series.push(run.series);
    } else {
      const again = analyzeLog(cropLog(run.log, window[0] - tol, window[1] + tol), settingsPerRun[i], {
        sha256: run.report.source.sha256,
        notes: run.report.notes,
        partial: run.report.partial,
      });
      again.report.settings = { ...again.report.settings, span_s: [window[0], window[1]] };
      reports.push(again.report);
      series.push(again.series);
    }
    compared.push({
      label: runLabel(i),
      path: run.report.source.path,
      ...(run.report.source.sha256 ? { sha256: run.report.source.sha256 } : {}),
      offset_s: offsets[i],
      window,
      ...(t.start !== undefined && t.end !== undefined ? { fullSpan: [t.start, t.end] as [number, number] } : {}),
      cropped: !inside,
    });
  });
  return {
    ok: true,
    comparison: {
      schema: COMPARISON_SCHEMA,
      tool: { version: full[0].tool.version },
      align,
      span,
      runs: compared,
      figures: compareReports(reports),
      overlays: overlays(series, offsets, span, buckets),
      reports,
    },
    series,
  };
}

/** Plain name of an alignment mode, for messages and reports. */
export function alignName(align: AlignMode): string {
  return align.by === 'event' ? `the first '${align.kind}' finding` : align.by === 'start' ? 'start' : 'log time';
}

/**
 * The analysis pipeline: one `NavLog` in, one `Report` (report-contract v1) and the panel's `Series` out.
 * Every stage is a pure function of the log and the settings; this file only orders them and assembles the report,
 * so the CLI, the extension host and the tests get the same numbers from the same code.
 */
import type { NavLog, Diagnostic } from './model';
import { REPORT_SCHEMA, type Finding, type Report } from './report';
import type { AnalysisSettings } from './settings';
import type { Series } from './series';
import { analyzeChannels } from './consistency/index';
import { analyzeErrors } from './errors/index';
import { analyzeBias } from './imu/index';
import { analyzeUwb } from './uwb/index';
import { analyzeResets, withConfirmedResets } from './resets/index';
import { finiteJson } from './finite';
import { emptyScratch } from './scratch';
import { releaseSlab } from './columnAlloc';
import { sampledMedianStep } from './stats/median';

/** Version of the tool written into every report (kept in step with package.json by a test). */
export const TOOL_VERSION = '0.1.0';

/** What the caller knows about the input that the core cannot compute (it reads no files). */
export interface SourceInfo {
  /** SHA-256 of the main log's bytes, hex. */
  sha256?: string;
  /** Notes attached to the run (from the notes sidecar), already in report form. */
  notes?: unknown[];
  /** Set when a memory budget forced a decimated analysis. */
  partial?: boolean;
}

/** The report plus the series behind it. */
export interface AnalysisResult {
  report: Report;
  series: Series[];
}

/** Elapsed milliseconds of each stage, for `--profile` and the benchmark. */
export type StageTimes = Record<string, number>;

/** Most reader diagnostics of one kind copied into `findings` (the rest are counted in the last one's message). */
const MAX_DIAGNOSTIC_FINDINGS_PER_KIND = 200;

/**
 * Run every analysis on one log and assemble the report.
 * @param log what the reader produced
 * @param settings resolved settings (see settings.ts)
 * @param info facts about the input the core cannot compute
 * @param times optional: filled with per-stage elapsed milliseconds
 */
export function analyzeLog(own: NavLog, settings: AnalysisSettings, info: SourceInfo = {}, times?: StageTimes): AnalysisResult {
  const clock = (): number => performance.now();
  const timed = <T>(name: string, fn: () => T): T => {
    const t0 = clock();
    const out = fn();
    if (times) times[name] = (times[name] ?? 0) + clock() - t0;
    return out;
  };

  emptyScratch(); // work columns shared by the stages (scratch.ts), none left from an earlier run
  // Filter restarts: the log's own plus those the user confirmed split every stage into segments (core/resets).
  const resets = timed('resets', () => analyzeResets(own, settings));
  const log = withConfirmedResets(own, settings);
  const channels = timed('channels', () => analyzeChannels(log, settings));
  const errors = timed('errors', () => analyzeErrors(log, settings));
  const bias = timed('bias', () => analyzeBias(log, settings));
  const uwb = timed('uwb', () => analyzeUwb(log, settings, channels.nisByChannel));

  const findings: Finding[] = [
    ...diagnosticFindings(log.diagnostics),
    ...channels.findings,
    ...errors.findings,
    ...bias.findings,
    ...uwb.findings,
    ...resets.findings,
  ];
  findings.sort(compareFindings);

  const report: Report = {
    schema: REPORT_SCHEMA,
    tool: { version: TOOL_VERSION },
    source: {
      path: log.path,
      format: log.format,
      rows: log.rows,
      ...(info.sha256 ? { sha256: info.sha256 } : {}),
      files: log.files.slice(),
    },
    settings: {
      confidence: settings.confidence,
      gate: settings.gate,
      window_s: settings.window_s,
      ...(settings.windowUpdates ? { windowUpdates: settings.windowUpdates } : {}),
      familyAlpha: settings.familyAlpha,
      imuPreset: settings.imuPreset,
      ...(settings.map ? { map: settings.map } : {}),
      timeOffset_s: settings.timeOffset_s,
      ...(settings.imuSpec ? { imuSpec: settings.imuSpec } : {}),
      ...(settings.biasStepAlpha !== undefined ? { biasStepAlpha: settings.biasStepAlpha } : {}),
      ...(settings.leverArm_m ? { leverArm_m: settings.leverArm_m } : {}),
      ...(settings.referenceOffset_m ? { referenceOffset_m: settings.referenceOffset_m } : {}),
      ...(settings.window ? { window: settings.window } : {}),
    },
    partial: info.partial ?? log.partial ?? false,
    time: timeSummary(log),
    channels: channels.block ?? [],
    ...(errors.block ? { errors: errors.block as Report['errors'] } : {}),
    ...(bias.block?.bias ? { bias: bias.block.bias as unknown as Record<string, unknown> } : {}),
    ...(bias.block?.imu ? { imu: bias.block.imu as unknown as Record<string, unknown> } : {}),
    ...(uwb.block ? { uwb: uwb.block as unknown as Record<string, unknown> } : {}),
    ...(resets.block ? { resets: resets.block } : {}),
    notes: info.notes ?? [],
    findings,
    worst: channels.worst,
  };
  emptyScratch();
  releaseSlab(); // the next run starts a slab of its own; this one is freed with the last column cut from it
  const clean = timed('finite', () => finiteJson(report) as Report);
  return { report: clean, series: [...channels.series, ...errors.series, ...bias.series, ...uwb.series] };
}

/** Start, end, epoch count and median step of the state records. */
export function timeSummary(log: NavLog): Report['time'] {
  const n = log.state.length;
  if (n === 0) return { epochs: 0 };
  const t = log.state.t_s;
  let start = Infinity;
  let end = -Infinity;
  for (let i = 0; i < n; i++) {
    const v = t[i];
    if (v < start) start = v;
    if (v > end) end = v;
  }
  return { start, end, epochs: n, ...(n > 1 ? { medianDt: sampledMedianStep(t, n) } : {}) };
}


/** Reader diagnostics (warnings and errors) as findings; info-level ones stay in the reader's list. */
function diagnosticFindings(diagnostics: Diagnostic[]): Finding[] {
  const out: Finding[] = [];
  const perKind = new Map<string, number>();
  for (const d of diagnostics) {
    if (d.severity === 'info') continue;
    const count = (perKind.get(d.kind) ?? 0) + 1;
    perKind.set(d.kind, count);
    if (count > MAX_DIAGNOSTIC_FINDINGS_PER_KIND) continue;
    out.push({
      kind: d.kind,
      severity: d.severity,
      message: d.message,
      file: d.file,
      ...(d.line > 0 ? { line: d.line } : {}),
      ...(d.column !== undefined ? { column: d.column } : {}),
      ...(d.t !== undefined ? { t: d.t } : {}),
      ...(d.channel !== undefined ? { channel: d.channel } : {}),
    });
  }
  for (const [kind, count] of perKind) {
    if (count > MAX_DIAGNOSTIC_FINDINGS_PER_KIND) {
      const f = out.filter((x) => x.kind === kind).pop();
      if (f) f.message += ` (${count - MAX_DIAGNOSTIC_FINDINGS_PER_KIND} more ${kind} findings not listed)`;
    }
  }
  return out;
}

/** Findings ordered by time (those without a time first), then by line. */
function compareFindings(a: Finding, b: Finding): number {
  const ta = a.t ?? -Infinity;
  const tb = b.t ?? -Infinity;
  if (ta !== tb) return ta < tb ? -1 : 1;
  return (a.line ?? 0) - (b.line ?? 0);
}

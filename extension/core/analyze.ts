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

/** Names of the stages, in the order the sequential pipeline runs them (`uwb` reads `channels`' NIS). */
export const STAGE_ORDER = ['resets', 'channels', 'errors', 'bias', 'uwb'] as const;

/** One analysis stage. */
export type StageName = (typeof STAGE_ORDER)[number];

/** What the errors stage returns; the part of it that crosses threads is {@link ErrorsPart}. */
export type ErrorsOutput = ReturnType<typeof analyzeErrors>;

/**
 * The errors stage's output without its series (a worker thread's answer: the series are lazy closures that cannot
 * cross threads, so a report assembled from this part has no errors series).
 */
export type ErrorsPart = Pick<ErrorsOutput, 'block' | 'findings'> & { series?: Series[] };

/** The outputs of the stages of one run, filled in by {@link runStage} (or, for `errors`, by a worker thread). */
export interface StageParts {
  resets?: ReturnType<typeof analyzeResets>;
  channels?: ReturnType<typeof analyzeChannels>;
  errors?: ErrorsPart;
  bias?: ReturnType<typeof analyzeBias>;
  uwb?: ReturnType<typeof analyzeUwb>;
}

/**
 * First step of an analysis: empties the shared work columns (scratch.ts) and returns the log every stage except
 * `resets` reads: `own` with the resets the user confirmed added (core/resets). `resets` reads `own` itself.
 */
export function prepareAnalysis(own: NavLog, settings: AnalysisSettings): NavLog {
  emptyScratch(); // work columns shared by the stages (scratch.ts), none left from an earlier run
  // Filter restarts: the log's own plus those the user confirmed split every stage into segments (core/resets).
  return withConfirmedResets(own, settings);
}

/**
 * Run one stage and store its output in `parts` (its elapsed milliseconds added to `times[name]`).
 * `own` is the log as read, `log` what {@link prepareAnalysis} returned; `uwb` needs `parts.channels` first.
 * Stages may run in any order otherwise, and `errors` on another thread (it reads only `log` and `settings`).
 * Stages never write to the log's columns: the command line shares them with the thread running `errors`.
 */
export function runStage(name: StageName, own: NavLog, log: NavLog, settings: AnalysisSettings, parts: StageParts, times?: StageTimes): void {
  const t0 = performance.now();
  switch (name) {
    case 'resets': parts.resets = analyzeResets(own, settings); break;
    case 'channels': parts.channels = analyzeChannels(log, settings); break;
    case 'errors': parts.errors = analyzeErrors(log, settings); break;
    case 'bias': parts.bias = analyzeBias(log, settings); break;
    case 'uwb': {
      if (!parts.channels) throw new Error('the uwb stage needs the channels stage first');
      parts.uwb = analyzeUwb(log, settings, parts.channels.nisByChannel);
      break;
    }
  }
  if (times) times[name] = (times[name] ?? 0) + performance.now() - t0;
}

/**
 * Run every analysis on one log and assemble the report: {@link prepareAnalysis}, every stage of
 * {@link STAGE_ORDER} on this thread ({@link runStage}), then {@link assembleReport}. The command line may run the
 * errors stage on a second thread instead (extension/node/parallelAnalysis.ts); the report is the same.
 * @param own what the reader produced
 * @param settings resolved settings (see settings.ts)
 * @param info facts about the input the core cannot compute
 * @param times optional: filled with per-stage elapsed milliseconds
 */
export function analyzeLog(own: NavLog, settings: AnalysisSettings, info: SourceInfo = {}, times?: StageTimes): AnalysisResult {
  const log = prepareAnalysis(own, settings);
  const parts: StageParts = {};
  for (const name of STAGE_ORDER) runStage(name, own, log, settings, parts, times);
  return assembleReport(log, settings, info, parts, times);
}

/**
 * Last step of an analysis: merge the stages' findings with the reader's (in one fixed order, then sorted by time, so
 * the order does not depend on which thread ran a stage), build the report, make it finite (finite.ts) and empty the
 * work columns. Every stage of {@link STAGE_ORDER} must be in `parts`. The series are those of the parts (an
 * errors part from a worker thread has none).
 */
export function assembleReport(log: NavLog, settings: AnalysisSettings, info: SourceInfo, parts: StageParts, times?: StageTimes): AnalysisResult {
  const { resets, channels, errors, bias, uwb } = parts;
  if (!resets || !channels || !errors || !bias || !uwb) {
    throw new Error(`assembleReport needs every stage; missing: ${STAGE_ORDER.filter((n) => !parts[n]).join(', ')}`);
  }
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
  const t0 = performance.now();
  const clean = finiteJson(report) as Report;
  if (times) times.finite = (times.finite ?? 0) + performance.now() - t0;
  return { report: clean, series: [...channels.series, ...(errors.series ?? []), ...bias.series, ...uwb.series] };
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

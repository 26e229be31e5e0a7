/**
 * The resets stage: which filter restarts split the run into segments, and which epochs look like an unconfirmed
 * restart. Restarts come from the log (`reset` records or metadata: `log.resets`) and from the user
 * (`settings.confirmedResets_s`: `--reset-at`, or `reset` notes of the sidecar); candidates come from a jump of the
 * logged state covariance (covarianceJump.ts). A candidate becomes a reset only when the user confirms it; until
 * then it is a `covariance-jump` finding (severity info) and the report's `resets.candidates` entry.
 *
 * The report block `resets` (an addition to report contract v1, docs/report-contract.md):
 *   { "factor": 10, "logged": [t...], "confirmed": [t...],
 *     "candidates": [{ "t", "line", "factor", "block", "sigmaBefore", "sigmaAfter", "confirmed", "logged" }],
 *     "segments":   [{ "t", "tEnd", "epochs", "start": "log" | "logged" | "confirmed" }] }
 */
import type { NavLog } from '../model';
import type { Finding } from '../report';
import type { AnalysisSettings } from '../settings';
import type { StageOutput } from '../series';
import { formatNumber } from '../consistency/format';
import { DEFAULT_JUMP_FACTOR, detectCovarianceJumps } from './covarianceJump';
import { mergeResetTimes } from './segments';
import { sampledMedianStep } from '../stats/median';

export { detectCovarianceJumps, stateBlock, DEFAULT_JUMP_FACTOR, type CovarianceJump } from './covarianceJump';
export { mergeResetTimes, segmentBreaks } from './segments';

/** A candidate restart as the report carries it. */
export interface ResetCandidate {
  t: number;
  line: number;
  /** File of the state record when the run has several files. */
  file?: string;
  /** One-epoch variance ratio of the block that jumped most. */
  factor: number;
  block: string;
  sigmaBefore: number;
  sigmaAfter: number;
  /** A confirmed reset (user) lies at this epoch: it starts a segment. */
  confirmed: boolean;
  /** A reset of the log itself lies at this epoch. */
  logged: boolean;
}

/** One segment of the state records. */
export interface ResetSegment {
  t: number;
  tEnd: number;
  epochs: number;
  /** What starts it: the log's beginning, a reset record of the log, or a reset the user confirmed. */
  start: 'log' | 'logged' | 'confirmed';
}

/** The report's `resets` block. */
export interface ResetsBlock {
  /** Threshold on a block's one-epoch variance ratio. */
  factor: number;
  /** Reset times of the log itself. */
  logged: number[];
  /** Reset times the user confirmed. */
  confirmed: number[];
  candidates: ResetCandidate[];
  segments: ResetSegment[];
}

/** Every reset that splits the run: the log's own and the confirmed ones, sorted and unique. */
export function effectiveResets(log: NavLog, settings: AnalysisSettings): number[] {
  return mergeResetTimes(log.resets, settings.confirmedResets_s);
}

/**
 * The log with the confirmed resets added to `log.resets` (the same object when there are none), so every stage
 * that splits by resets sees them.
 */
export function withConfirmedResets(log: NavLog, settings: AnalysisSettings): NavLog {
  const confirmed = settings.confirmedResets_s;
  if (!confirmed || confirmed.length === 0) return log;
  return { ...log, resets: effectiveResets(log, settings) };
}


/** Whether some time of the sorted list lies within `tol` of t. */
function near(sorted: readonly number[], t: number, tol: number): boolean {
  for (const r of sorted) if (Math.abs(r - t) <= tol) return true;
  return false;
}

/**
 * Resets and candidates of one log (see the file comment). `log.resets` must be the log's own resets (not merged
 * with the confirmed ones). Never throws for bad data: a failure becomes a `note` finding.
 */
export function analyzeResets(log: NavLog, settings: AnalysisSettings): StageOutput<ResetsBlock> {
  try {
    return analyzeResetsUnsafe(log, settings);
  } catch (e) {
    const message = e instanceof Error ? e.message : String(e);
    return { findings: [{ kind: 'note', severity: 'warning', message: `filter resets could not be looked for: ${message}` }], series: [] };
  }
}

function analyzeResetsUnsafe(log: NavLog, settings: AnalysisSettings): StageOutput<ResetsBlock> {
  const state = log.state;
  const n = state.length;
  if (n === 0) return { findings: [], series: [] };
  const factor = settings.covarianceJumpFactor ?? DEFAULT_JUMP_FACTOR;
  const logged = mergeResetTimes(log.resets);
  const confirmed = mergeResetTimes(settings.confirmedResets_s);
  // Half the median step: how close a reset time must be to "be at" an epoch.
  const step = sampledMedianStep(state.t_s, n); // once: the detector below needs it too
  const tol = Math.max(step / 2, 1e-9);
  const findings: Finding[] = [];
  const candidates: ResetCandidate[] = [];
  for (const j of detectCovarianceJumps(state, factor, Math.max(settings.window_s / 5, 4 * tol), step)) {
    const fileIndex = state.fileIndex?.[j.index];
    const file = fileIndex !== undefined && log.files[fileIndex] !== undefined ? log.files[fileIndex] : state.file;
    const c: ResetCandidate = {
      t: j.t, line: j.line, ...(file !== state.file ? { file } : {}), factor: j.factor, block: j.block,
      sigmaBefore: j.sigmaBefore, sigmaAfter: j.sigmaAfter,
      confirmed: near(confirmed, j.t, tol), logged: near(logged, j.t, tol),
    };
    candidates.push(c);
    if (c.confirmed || c.logged) continue;
    findings.push({
      kind: 'covariance-jump', t: c.t, line: c.line, file, channel: c.block, score: c.factor, size: c.factor, severity: 'info',
      message: `The covariance of ${c.block} grew ${formatNumber(c.factor, 3)}-fold in one epoch (sigma ` +
        `${formatNumber(c.sigmaBefore, 3)} to ${formatNumber(c.sigmaAfter, 3)}): a filter restart? Confirm it as a ` +
        `reset to analyse the run in segments from here (threshold ${formatNumber(factor, 3)}).`,
    });
  }
  // A confirmed reset outside the state records starts no segment: say so rather than ignore it silently.
  const t0 = state.t_s[0], t1 = state.t_s[n - 1];
  for (const r of confirmed) {
    if (r >= t0 - tol && r <= t1) continue;
    findings.push({
      kind: 'note', severity: 'info', t: r,
      message: `The confirmed filter reset at t = ${formatNumber(r)} s lies outside the state records ` +
        `(${formatNumber(t0)} to ${formatNumber(t1)} s); it starts no segment.`,
    });
  }
  // Segments of the state records.
  const sources = new Map<number, 'logged' | 'confirmed'>();
  for (const r of logged) sources.set(r, 'logged');
  for (const r of confirmed) if (!sources.has(r)) sources.set(r, 'confirmed');
  const all = mergeResetTimes(logged, confirmed);
  const t = state.t_s;
  const bounds = [0];
  const starts: ResetSegment['start'][] = ['log'];
  let k = 0;
  for (const r of all) {
    while (k < n && !(t[k] >= r)) k++;
    if (k >= n) break;
    if (k > bounds[bounds.length - 1]) {
      bounds.push(k);
      starts.push(sources.get(r) ?? 'logged');
    }
  }
  bounds.push(n);
  const segments: ResetSegment[] = [];
  for (let s = 0; s + 1 < bounds.length; s++) {
    const i0 = bounds[s], i1 = bounds[s + 1];
    segments.push({ t: t[i0], tEnd: t[i1 - 1], epochs: i1 - i0, start: starts[s] });
  }
  return { block: { factor, logged, confirmed, candidates, segments }, findings, series: [] };
}

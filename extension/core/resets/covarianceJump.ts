/**
 * Candidate filter restarts found in the logged state covariance: epochs where the covariance of some block of
 * states jumps UP by a large factor from one epoch to the next.
 *
 * Why this rule (stated in docs/errors.md, "Resets"): between two epochs a Kalman-type filter grows its covariance
 * only by the prediction, P- = F P F' + Q, which over one epoch (milliseconds to a tenth of a second) changes a
 * block's variance by a few percent, and an update only shrinks it. A re-initialisation sets P back to its initial
 * value, typically 100 to 10^6 times the converged one. So the variance ratio of a block between consecutive epochs
 * is near 1 except at a restart, and a threshold of 10 (sigma growing more than sqrt(10) = 3.2 times in one epoch)
 * separates the two without a model of the filter.
 *
 * Conventions:
 * - A block is a group of states sharing a name apart from the axis suffix (`p_x p_y p_z` -> `p`, `att_0..2` ->
 *   `att`); its variance is the trace of its diagonal block (sum of the states' variances), which is invariant to a
 *   rotation of the axes and is not fooled by one nearly-zero axis.
 * - Variances come from the full covariance `state.P` when it is logged (its diagonal), else from the `sigma_*`
 *   columns squared.
 * - The ratio of epoch k is trace_b(k) / trace_b(prev), where prev is the last earlier epoch with a finite, positive
 *   trace for that block; a previous trace below FLOOR_RELATIVE times the block's median trace is raised to that
 *   floor (a variance logged as almost 0, or rounded to 0 by the logger, must not make an infinite ratio).
 * - Across a time gap (a step longer than 1.5 times the median step, e.g. a log written only at measurement updates
 *   during an outage) the filter predicts for many steps and P grows gradually; the ratio is then taken per median
 *   step, ratio^(median step / step), so an outage is not mistaken for a restart (a restart inside a gap is then
 *   missed; confirm it by hand).
 * - An epoch is a candidate when its largest block ratio is at least `factor`. Candidates closer than `merge_s` to
 *   the previous candidate belong to the same restart (blocks restarted on consecutive epochs): the first epoch is
 *   kept (the segment starts there) with the largest factor.
 */
import type { StateStream } from '../model';

/** Default threshold on the one-epoch variance ratio of a block. */
export const DEFAULT_JUMP_FACTOR = 10;

/** Previous traces below this share of the block's median trace are raised to it before the ratio. */
export const FLOOR_RELATIVE = 1e-6;

/** A candidate restart. */
export interface CovarianceJump {
  /** Epoch index in the state stream. */
  index: number;
  /** Time of the first epoch with the grown covariance, seconds. */
  t: number;
  /** Its 1-based line (in the file of that state record). */
  line: number;
  /** Largest one-epoch variance ratio of a block (trace after / trace before). */
  factor: number;
  /** The block with that ratio (`p`, `v`, `att`, ...). */
  block: string;
  /** Sigma of that block (square root of its trace) before and after, in its units. */
  sigmaBefore: number;
  sigmaAfter: number;
}

/** Variances per state: name and one column (length = epochs). */
interface VarianceColumn {
  state: string;
  variance: Float64Array;
}

/** The block a state belongs to: its name without an axis suffix (`_x`, `_y`, `_z`, `_w`, or a trailing index). */
export function stateBlock(state: string): string {
  const m = /^(.*?)_(?:[xyzw]|\d+)$/.exec(state);
  return m && m[1] !== '' ? m[1] : state;
}

function varianceColumns(state: StateStream): VarianceColumn[] {
  const n = state.length;
  const out: VarianceColumn[] = [];
  if (state.P && state.P.states.length > 0) {
    const k = state.P.states.length;
    const m = state.P.matrix;
    if (m.length >= n * k * k) {
      state.P.states.forEach((name, c) => {
        const v = new Float64Array(n);
        for (let i = 0; i < n; i++) v[i] = m[i * k * k + c * k + c];
        out.push({ state: name, variance: v });
      });
      return out;
    }
  }
  for (const [name, col] of state.columns) {
    if (!name.startsWith('sigma_')) continue;
    const v = new Float64Array(n);
    for (let i = 0; i < n; i++) v[i] = col[i] * col[i];
    out.push({ state: name.slice('sigma_'.length), variance: v });
  }
  return out;
}

/** Median positive step of a time column, 0 when there is none (sampled for long columns). */
function medianStep(t: Float64Array, n: number): number {
  const stride = Math.max(1, Math.floor(n / 20000));
  const steps: number[] = [];
  for (let i = stride; i < n; i += stride) {
    const d = t[i] - t[i - 1];
    if (d > 0 && Number.isFinite(d)) steps.push(d);
  }
  if (steps.length === 0) return 0;
  steps.sort((a, b) => a - b);
  return steps[steps.length >> 1];
}

/** Median of the finite positive values of a column (sampled for long columns: a floor needs no exact median). */
function positiveMedian(v: Float64Array, n: number): number {
  const stride = Math.max(1, Math.floor(n / 20000));
  const xs: number[] = [];
  for (let i = 0; i < n; i += stride) if (v[i] > 0 && Number.isFinite(v[i])) xs.push(v[i]);
  if (xs.length === 0) return NaN;
  xs.sort((a, b) => a - b);
  return xs[xs.length >> 1];
}

/**
 * Candidate filter restarts of a state stream (see the file comment). Pure; never throws for bad values (NaN,
 * negative or infinite variances are skipped).
 * @param state the log's state records
 * @param factor threshold on a block's one-epoch variance ratio (DEFAULT_JUMP_FACTOR)
 * @param merge_s jumps closer than this to the previous candidate are one restart, seconds
 */
export function detectCovarianceJumps(state: StateStream, factor = DEFAULT_JUMP_FACTOR, merge_s = 1): CovarianceJump[] {
  const n = state.length;
  if (n < 2 || !(factor > 1)) return [];
  // Traces per block.
  const blocks = new Map<string, Float64Array>();
  for (const { state: name, variance } of varianceColumns(state)) {
    const b = stateBlock(name);
    let tr = blocks.get(b);
    if (!tr) {
      tr = new Float64Array(n);
      blocks.set(b, tr);
    }
    for (let i = 0; i < n; i++) tr[i] += variance[i]; // NaN stays NaN: that epoch is skipped for the block
  }
  const t = state.t_s;
  const step = medianStep(t, n);
  const bestRatio = new Float64Array(n);
  const bestBlock: string[] = new Array<string>(n);
  const before = new Float64Array(n);
  for (const [name, tr] of blocks) {
    const floor = FLOOR_RELATIVE * positiveMedian(tr, n);
    if (!(floor > 0)) continue;
    let prev = -1;
    for (let i = 0; i < n; i++) {
      const v = tr[i];
      if (!(v > 0) || !Number.isFinite(v)) continue;
      if (prev >= 0) {
        const dt = t[i] - t[prev];
        const raw = v / Math.max(tr[prev], floor);
        const r = step > 0 && dt > 1.5 * step ? Math.pow(raw, step / dt) : raw;
        if (r > bestRatio[i]) {
          bestRatio[i] = r;
          bestBlock[i] = name;
          before[i] = tr[prev];
        }
      }
      prev = i;
    }
  }
  const out: CovarianceJump[] = [];
  for (let i = 1; i < n; i++) {
    if (!(bestRatio[i] >= factor)) continue;
    const block = bestBlock[i];
    const tr = blocks.get(block) as Float64Array;
    const c: CovarianceJump = {
      index: i, t: state.t_s[i], line: state.line[i], factor: bestRatio[i], block,
      sigmaBefore: Math.sqrt(before[i]), sigmaAfter: Math.sqrt(tr[i]),
    };
    const last = out[out.length - 1];
    if (last && Math.abs(c.t - last.t) < merge_s) {
      if (c.factor > last.factor) {
        last.factor = c.factor;
        last.block = c.block;
        last.sigmaBefore = c.sigmaBefore;
        last.sigmaAfter = c.sigmaAfter;
      }
      continue;
    }
    out.push(c);
  }
  return out;
}

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
 *   columns squared; a negative sigma (invalid: the reader reports it and reads it as missing) counts as missing.
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
import { sampledMedianStep, selectInPlace } from '../stats/median';
import { giveBack, takeFloat64 } from '../scratch';

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

/** The block a state belongs to: its name without an axis suffix (`_x`, `_y`, `_z`, `_w`, or a trailing index). */
export function stateBlock(state: string): string {
  const m = /^(.*?)_(?:[xyzw]|\d+)$/.exec(state);
  return m && m[1] !== '' ? m[1] : state;
}

/**
 * Where the variances of one block are read: the diagonal offsets of its states in the row-major P matrix (stride
 * k*k per epoch), or its `sigma_*` columns (squared when read).
 */
interface BlockSource {
  name: string;
  /** Offsets into `state.P.matrix` of epoch 0 (P form). */
  diagonal: number[];
  /** Sigma columns (sigma form). */
  sigmas: Float64Array[];
}

/** The blocks of a state stream and how their variances are read (P diagonal when logged, else sigma columns). */
function blockSources(state: StateStream): { blocks: BlockSource[]; stride: number } {
  const byName = new Map<string, BlockSource>();
  const get = (name: string): BlockSource => {
    let b = byName.get(name);
    if (!b) {
      b = { name, diagonal: [], sigmas: [] };
      byName.set(name, b);
    }
    return b;
  };
  if (state.P && state.P.states.length > 0) {
    const k = state.P.states.length;
    if (state.P.matrix.length >= state.length * k * k) {
      state.P.states.forEach((name, c) => get(stateBlock(name)).diagonal.push(c * k + c));
      return { blocks: [...byName.values()], stride: k * k };
    }
  }
  for (const [name, col] of state.columns) {
    if (name.startsWith('sigma_')) get(stateBlock(name.slice('sigma_'.length))).sigmas.push(col);
  }
  return { blocks: [...byName.values()], stride: 0 };
}

/**
 * The blocks flattened for the epoch loop: block k reads the P diagonal offsets diag[diagStart[k]..diagStart[k+1])
 * and the sigma columns sig[sigStart[k]..sigStart[k+1]).
 */
interface BlockLayout {
  blocks: BlockSource[];
  stride: number;
  matrix: Float64Array | undefined;
  diag: number[];
  diagStart: Int32Array;
  sig: Float64Array[];
  sigStart: Int32Array;
}

function blockLayout(state: StateStream): BlockLayout {
  const { blocks, stride } = blockSources(state);
  const matrix = stride > 0 ? state.P?.matrix : undefined;
  const nb = blocks.length;
  const diagStart = new Int32Array(nb + 1);
  const sigStart = new Int32Array(nb + 1);
  const diag: number[] = [];
  const sig: Float64Array[] = [];
  for (let k = 0; k < nb; k++) {
    for (const d of blocks[k].diagonal) diag.push(d);
    for (const c of blocks[k].sigmas) sig.push(c);
    diagStart[k + 1] = diag.length;
    sigStart[k + 1] = sig.length;
  }
  return { blocks, stride, matrix, diag, diagStart, sig, sigStart };
}

/**
 * What the first pass also gathers, for the floors: every `every`-th epoch's finite positive trace of each block
 * (block k's at samples[k * per ..], `count[k]` of them), and the smallest previous trace a ratio was taken from.
 */
interface FloorSample {
  every: number;
  per: number;
  samples: Float64Array;
  count: Int32Array;
  minBefore: Float64Array;
}

/**
 * Candidate filter restarts of a state stream (see the file comment). Pure; never throws for bad values (NaN,
 * negative or infinite variances are skipped).
 * @param state the log's state records
 * @param factor threshold on a block's one-epoch variance ratio (DEFAULT_JUMP_FACTOR)
 * @param merge_s jumps closer than this to the previous candidate are one restart, seconds
 * @param step_s the median epoch step (sampledMedianStep of `state.t_s`), when the caller has it already
 */
export function detectCovarianceJumps(
  state: StateStream, factor = DEFAULT_JUMP_FACTOR, merge_s = 1, step_s?: number,
): CovarianceJump[] {
  const n = state.length;
  if (n < 2 || !(factor > 1)) return [];
  // The epoch loop reads every variance column once (memory-bound: ~18 MB for 9 sigma columns of 250k epochs), so
  // the floors' median traces, which need a sample of the same traces before the loop, are gathered by the loop
  // itself: it first runs without floors, which gives the same ratios whenever no previous trace lies below its
  // block's floor (the usual case: a floor is a millionth of the median); otherwise it runs again with them.
  const layout = blockLayout(state);
  const nb = layout.blocks.length;
  const step = step_s ?? sampledMedianStep(state.t_s, n);
  const every = Math.max(1, Math.floor(n / 20000));
  const per = Math.ceil(n / every);
  const sample: FloorSample = {
    every, per, samples: takeFloat64(nb * per), count: new Int32Array(nb), minBefore: new Float64Array(nb).fill(Infinity),
  };
  const out = scanJumps(state, layout, step, factor, merge_s, undefined, sample);
  const floors = new Float64Array(nb);
  let floorsApply = false;
  for (let k = 0; k < nb; k++) {
    // Median of the block's finite positive traces (sampled: a floor needs no exact median), the upper middle
    // value as after a sort.
    const m = sample.count[k];
    const median = m === 0 ? NaN : selectInPlace(sample.samples.subarray(k * per, k * per + m), m >> 1, m);
    floors[k] = FLOOR_RELATIVE * median;
    if (!(floors[k] > 0) || sample.minBefore[k] < floors[k]) floorsApply = true;
  }
  giveBack(sample.samples);
  return floorsApply ? scanJumps(state, layout, step, factor, merge_s, floors, undefined) : out;
}

/**
 * The epoch loop of {@link detectCovarianceJumps}: with `floors`, the rule of the file comment (blocks whose floor
 * is not positive are left out); without, no floor (and `sample` is filled).
 */
function scanJumps(
  state: StateStream, layout: BlockLayout, step: number, factor: number, merge_s: number,
  floors: Float64Array | undefined, sample: FloorSample | undefined,
): CovarianceJump[] {
  // One pass over the epochs, every block's trace computed on the fly: no column per state or block is made
  // (new memory is the expensive part on a long log), only a few numbers per block. The traces are summed inline
  // in the same order as a per-block helper would (P diagonal, then sigma squares): a call and two for-of loops per
  // block and epoch cost ~4x the arithmetic on 250k epochs.
  const n = state.length;
  const t = state.t_s;
  const { blocks, stride, matrix, diag, diagStart, sig, sigStart } = layout;
  const nb = blocks.length;
  const prevTrace = new Float64Array(nb);
  const prevIndex = new Int32Array(nb).fill(-1);
  const out: CovarianceJump[] = [];
  const limit = 1.5 * step;
  let untilSample = 0;
  for (let i = 0; i < n; i++) {
    let best = 0;
    let bestBlock = -1;
    let bestBefore = 0;
    let bestAfter = 0;
    const row = i * stride;
    const sampleNow = sample !== undefined && untilSample === 0;
    if (sample) untilSample = sampleNow ? sample.every - 1 : untilSample - 1;
    for (let k = 0; k < nb; k++) {
      const floor = floors ? floors[k] : 0;
      if (floors && !(floor > 0)) continue;
      let v = 0;
      if (matrix) for (let q = diagStart[k]; q < diagStart[k + 1]; q++) v += matrix[row + diag[q]];
      // a negative sigma is invalid, not a variance: NaN, so the epoch is skipped as for a missing one
      for (let q = sigStart[k]; q < sigStart[k + 1]; q++) { const s = sig[q][i]; v += s >= 0 ? s * s : NaN; }
      if (!(v > 0) || !Number.isFinite(v)) continue; // NaN, zero or negative: that epoch is skipped for the block
      if (sampleNow && sample) sample.samples[k * sample.per + sample.count[k]++] = v;
      const prev = prevIndex[k];
      if (prev >= 0) {
        const dt = t[i] - t[prev];
        const before = prevTrace[k];
        if (sample && before < sample.minBefore[k]) sample.minBefore[k] = before;
        const raw = floors ? v / Math.max(before, floor) : v / before;
        const r = step > 0 && dt > limit ? Math.pow(raw, step / dt) : raw;
        if (r > best) {
          best = r;
          bestBlock = k;
          bestBefore = before;
          bestAfter = v;
        }
      }
      prevTrace[k] = v;
      prevIndex[k] = i;
    }
    if (i === 0 || !(best >= factor)) continue;
    const c: CovarianceJump = {
      index: i, t: t[i], line: state.line[i], factor: best, block: blocks[bestBlock].name,
      sigmaBefore: Math.sqrt(bestBefore), sigmaAfter: Math.sqrt(bestAfter),
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

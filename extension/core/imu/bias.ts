/**
 * Bias estimates in the estimator's log: final value, total change, drift rate, settling time, steps, drift against
 * the IMU specification, and (gyro) consistency with the body rate of the ground-truth attitude.
 *
 * Conventions (stated once, here):
 * - Bias columns are `bg_x bg_y bg_z` (rad/s) and `ba_x ba_y ba_z` (m/s^2) of the state stream, with optional
 *   `sigma_bg_x ...` 1-sigma columns (log-conventions.md). Axis 0, 1, 2 = x, y, z of the body frame.
 * - Times in the report are the log's own time base; `settleTime` is seconds from the first state record.
 * - Increments are differences of consecutive finite bias values. When at least 30% are exact zeros (a log that
 *   repeats the estimate between updates) the zeros are left out, so the increments are the estimator's corrections;
 *   an increment over a time step longer than the median step (a gap) is divided by sqrt(step / median step).
 *   In a consistent filter a correction is gain times a white innovation, so the increments are close to white:
 *   that is what makes CUSUM on them meaningful.
 * - Noise normalisation: z = (d - median) / scale, with the median and the robust scale (`robustScale`: MAD, then the
 *   RMS within 5 scales) of the last half of the increments (taken as settled).
 * - Settling: the first place where two consecutive windows of W increments (W = n/200 within [10, 100]) each have an
 *   RMS about the reference median of at most 1.25 times the reference scale and a mean within 4 standard errors.
 *   Before it the estimate is converging (large gain, corrections of one sign); steps are sought only after it.
 * - Steps: two-sided CUSUM (cusum.ts) with k = 0.5 and h chosen so that the in-control ARL is n / alpha over the n
 *   settled increments: a clean axis raises a false step with probability about alpha (default 0.01) per axis.
 * - Drift: over non-overlapping windows of T in {settled span, 3600 s, 600 s, 60 s}, the change of the smoothed bias
 *   (block medians, at most 200 over the settled part) is compared with 3 sqrt(K^2 T + (0.664 B)^2 + 2 sigma^2): K the
 *   rate random walk and B the bias instability of the specification; sigma^2 = sigma_final^2 + s^2 with sigma_final
 *   the estimator's own final 1-sigma when logged and s the scatter of the block medians (1.4826 MAD of their
 *   differences / sqrt 2), because the estimate's error and jitter enter both ends of the difference.
 *   Windows that contain a detected step are skipped.
 */
import type { NavLog, StateStream } from '../model';
import type { Finding } from '../report';
import type { Series } from '../series';
import { quatLog, quatMultiply, quatConjugate } from '../geometry/quat';
import { cusumThresholdForArl, detectChangesScaled } from './cusum';
import { BIAS_INSTABILITY_FACTOR } from './noiseFigures';
import type { ResolvedSpec } from './presets';
import { fromSI } from './units';
import { lazySeries } from '../lazySeries';
import { medianInPlace } from '../stats/median';
import { radixMedian } from '../stats/radixMedian';
import { giveBack, takeFloat64, takeInt32 } from '../scratch';

/** Which bias. */
export type BiasSensor = 'gyro' | 'accel';

/** A detected step (report contract `bias.*.steps[]`, plus its end and source line). */
export interface BiasStep {
  t: number;
  axis: number;
  size: number;
  tEnd: number;
  line?: number;
}

/** The worst drift window of one axis. */
export interface BiasDriftCheck {
  window_s: number;
  t: number;
  tEnd: number;
  change: number;
  threshold: number;
  ratio: number;
}

/** Gyro minus bias against the body rate of the ground-truth attitude, per axis (rad/s). */
export interface GyroTruthConsistency {
  intervals: number;
  residualMean: number[];
  residualRms: number[];
  /** Mean of (gyro - truth body rate): the bias the raw data imply. */
  impliedBias: number[];
  /** Mean of the logged bias over the same intervals. */
  loggedBias: number[];
}

/** Report block of one sensor's bias (`bias.gyro`, `bias.accel`). Arrays are per axis, `null` where not computable. */
export interface BiasSensorBlock {
  final: (number | null)[];
  totalChange: (number | null)[];
  /** Robust (Theil-Sen) slope after settling, SI units per hour. */
  driftPerHour: (number | null)[];
  /** Latest settling time over the axes, seconds from the log's start. */
  settleTime?: number;
  settleTimeAxes: (number | null)[];
  /** The estimator's own final 1-sigma, where logged. */
  sigmaFinal?: (number | null)[];
  steps: BiasStep[];
  /** Decision interval h of each axis's step detector (scale units). */
  stepThreshold: (number | null)[];
  /** Worst drift window per axis. */
  drift: (BiasDriftCheck | null)[];
  consistency?: GyroTruthConsistency;
}

const PREFIX: Record<BiasSensor, string> = { gyro: 'bg', accel: 'ba' };
const AXES = ['x', 'y', 'z'];
const UNIT: Record<BiasSensor, string> = { gyro: 'rad/s', accel: 'm/s^2' };
const SHOW_UNIT: Record<BiasSensor, string> = { gyro: 'deg/h', accel: 'ug' };

/** Median of finite numbers (a copy is partially reordered: O(n) expected). NaN for empty. */
export function median(values: ArrayLike<number>): number {
  return medianInPlace(Float64Array.from(values));
}


// The per-sample passes of an axis are small functions of their own, shared by the six axes: the engine optimises a
// small function once and reuses it for every axis, while the loops of one long function ran mostly unoptimised on a
// cold start (each loop compiled on its own, then dropped at the first line after it not yet run): about 3x the time.

/** Repeated values between consecutive usable samples, counted by the last {@link usableSamples} call. */
let scanZeros = 0;
/** Corrections written by the last {@link usableSamples} call. */
let scanCorrections = 0;

/**
 * Count of the usable samples (finite value and time, time increasing); leaves the number of usable samples equal to
 * the one before in `scanZeros`. In the same pass, the corrections (see {@link corrections}, zeros kept) with the
 * median step `dtMedian` go to `d` (correction j ends at usable sample j + 1), their count to `scanCorrections`: the
 * same values as {@link corrections} gives afterwards with that median step. No index column is written: when every
 * record is usable (the usual case) the indices are the identity, and otherwise {@link usableIndices} makes them.
 */
function usableSamples(t: Float64Array, col: Float64Array, n: number, dtMedian: number, d: Float64Array): number {
  let count = 0;
  let zeros = 0;
  let nd = 0;
  let lastT = -Infinity;
  let lastC = NaN;
  for (let i = 0; i < n; i++) {
    const ti = t[i];
    const ci = col[i];
    if (ci - ci === 0 && ti - ti === 0 && ti > lastT) { // finite, time increasing
      if (count > 0) {
        if (ci === lastC) zeros++;
        // gapScaled(ci - lastC, ti - lastT, dtMedian) written out: until the engine optimises this loop (on the first
        // axis) every call costs far more than its arithmetic
        const v = ci - lastC;
        if (dtMedian > 0) {
          const q = (ti - lastT) / dtMedian;
          const e = q - 1;
          d[nd++] = v / Math.sqrt(q < 9e15 ? 1 + (e + Math.abs(e)) * 0.5 : Math.max(1, q));
        } else d[nd++] = v;
      }
      count++;
      lastT = ti;
      lastC = ci;
    }
  }
  scanZeros = zeros;
  scanCorrections = nd;
  return count;
}

/** Indices of the usable samples (as {@link usableSamples} counts them) into `idx`; returns their count. */
function usableIndices(t: Float64Array, col: Float64Array, n: number, idx: Int32Array): number {
  let count = 0;
  let lastT = -Infinity;
  for (let i = 0; i < n; i++) {
    const ti = t[i];
    const ci = col[i];
    if (ci - ci === 0 && ti - ti === 0 && ti > lastT) { idx[count++] = i; lastT = ti; }
  }
  return count;
}

/**
 * An increment v over a time step dt, divided by sqrt(dt / dtMedian) when the step is longer than the median one:
 * v / sqrt(max(1, dt / dtMedian)), v itself when dtMedian is not positive. Written without branches on the ratio
 * (max(1, q) = 1 + (e + |e|) / 2 with e = q - 1, exact for q < 2^53; v / sqrt(1) is v): time steps of a regular log
 * scatter in the last bits around the median, so a test of the ratio against 1 was a coin flip the processor
 * mispredicted, and the scan took twice as long (measured).
 */
function gapScaled(v: number, dt: number, dtMedian: number): number {
  if (!(dtMedian > 0)) return v;
  const q = dt / dtMedian;
  const e = q - 1;
  const r = q < 9e15 ? 1 + (e + Math.abs(e)) * 0.5 : Math.max(1, q);
  return v / Math.sqrt(r);
}

/** Median of the time steps xs[j] - xs[j-1] taken at a stride giving at most about 20000 of them (selected in `work`). */
function sampledStepMedian(xs: Float64Array, count: number, work: Float64Array): number {
  const stride = Math.max(1, Math.floor(count / 20000));
  let m = 0;
  for (let j = 1; j < count; j += stride) work[m++] = xs[j] - xs[j - 1];
  return medianInPlace(work, m);
}

/**
 * The corrections (module comment): increments of ys, exact zeros left out when `dropZeros`, divided by
 * sqrt(step / median step) over long steps; `pos` gets the index of each increment's end sample. Returns their count.
 */
function corrections(
  xs: Float64Array, ys: Float64Array, count: number, dropZeros: boolean, dtMedian: number, d: Float64Array, pos: Int32Array,
): number {
  let nd = 0;
  for (let j = 1; j < count; j++) {
    const v = ys[j] - ys[j - 1];
    if (dropZeros && v === 0) continue;
    d[nd] = gapScaled(v, xs[j] - xs[j - 1], dtMedian);
    pos[nd++] = j;
  }
  return nd;
}


/**
 * Work columns of one axis's analysis, shared by the axes and sensors of a log (each at least the stream's length).
 * The index columns are taken only when needed (a log with unusable records, or repeated values left out).
 */
export interface BiasScratch {
  n: number;
  d: Float64Array;
  work: Float64Array;
  idx?: Int32Array;
  pos?: Int32Array;
  /** The median step of the stream's time column (sampled), the same for every axis: taken once, with the columns. */
  dtAll: number;
}

/**
 * Work columns for the state stream `state`, from the shared pool (scratch.ts), and its median time step: give them
 * back with {@link giveBackBiasScratch}.
 */
export function biasScratch(state: StateStream): BiasScratch {
  const n = state.length;
  const work = takeFloat64(n);
  return { n, d: takeFloat64(n), work, dtAll: sampledStepMedian(state.t_s, n, work) };
}

/** The scratch's index column `which`, taken from the pool on first use. */
function indexColumn(s: BiasScratch, which: 'idx' | 'pos'): Int32Array {
  return (s[which] ??= takeInt32(s.n));
}

/** Return the work columns of {@link biasScratch} to the shared pool. */
export function giveBackBiasScratch(s: BiasScratch): void {
  giveBack(s.idx, s.d, s.pos, s.work);
}

/** 1.4826 x median absolute deviation around `center` (consistent for a normal scale); `work` as long as `values`. */
function madScale(values: ArrayLike<number>, center: number, work: Float64Array = new Float64Array(values.length)): number {
  const n = values.length;
  for (let i = 0; i < n; i++) work[i] = Math.abs(values[i] - center);
  return 1.4826 * radixMedian(work, n);
}

/**
 * Robust scale of values around `center`: start from 1.4826 MAD (or 1.2533 x the mean absolute deviation when the
 * MAD is zero), then twice the RMS of the values within 5 scales. The RMS step keeps the estimate right for coarsely
 * rounded logs, where the MAD of a few distinct values is off by tens of percent; the 5-scale cut keeps it robust.
 */
export function robustScale(values: ArrayLike<number>, center: number, work?: Float64Array): number {
  let s = madScale(values, center, work && work.length >= values.length ? work : undefined);
  if (!(s > 0)) {
    let acc = 0;
    for (let i = 0; i < values.length; i++) acc += Math.abs(values[i] - center);
    s = 1.2533 * (acc / values.length);
  }
  if (!(s > 0)) return 0;
  for (let it = 0; it < 2; it++) {
    const ss = sumSquaresWithin(values, center, 5 * s);
    const c = withinCount;
    if (c > 0 && ss > 0) s = Math.sqrt(ss / c);
  }
  return s;
}

/** Values counted by the last {@link sumSquaresWithin} call. */
let withinCount = 0;

/**
 * Sum of (v - center)^2 over the values with |v - center| <= limit (their count to `withinCount`). A function of its
 * own so that both passes of {@link robustScale} run the one optimised loop (a loop inside the iteration was dropped
 * back to unoptimised code after its first pass).
 */
function sumSquaresWithin(values: ArrayLike<number>, center: number, limit: number): number {
  let ss = 0;
  let c = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i] - center;
    if (Math.abs(v) <= limit) { ss += v * v; c++; }
  }
  withinCount = c;
  return ss;
}

/** Theil-Sen slope of (x, y) points (median of pairwise slopes). */
export function theilSenSlope(x: ArrayLike<number>, y: ArrayLike<number>): number {
  const slopes = takeFloat64((x.length * (x.length - 1)) / 2); // work column (selection does not keep it)
  let k = 0;
  for (let i = 0; i < x.length; i++) {
    for (let j = i + 1; j < x.length; j++) {
      const dx = x[j] - x[i];
      if (dx !== 0) slopes[k++] = (y[j] - y[i]) / dx;
    }
  }
  const slope = radixMedian(slopes, k);
  giveBack(slopes);
  return slope;
}

/** One value in the unit people read (deg/h for gyro, ug for accel), as text. */
function show(sensor: BiasSensor, value_SI: number): string {
  const v = fromSI(value_SI, SHOW_UNIT[sensor]);
  return `${value_SI.toPrecision(3)} ${UNIT[sensor]} (${v === undefined ? '?' : v.toPrecision(3)} ${SHOW_UNIT[sensor]})`;
}

/** Per-axis analysis result. */
interface AxisResult {
  final: number;
  totalChange: number;
  driftPerHour: number;
  settleTime: number;
  sigmaFinal: number;
  steps: BiasStep[];
  h: number;
  drift?: BiasDriftCheck;
  series: Series[];
}

/** Options shared by the axes. */
export interface BiasOptions {
  /** False-step probability per axis (0.01). */
  alpha: number;
  spec: ResolvedSpec;
  /** Work columns (biasScratch) at least as long as the stream; made per sensor when absent. */
  scratch?: BiasScratch;
}

/**
 * Analyse one sensor's bias columns of the state stream.
 * @param state the estimator's state records
 * @param sensor gyro or accel
 * @param options false-alarm rate and the resolved IMU specification
 * @returns the block (absent when no bias column exists), findings and series
 */
export function analyzeBiasSensor(state: StateStream, sensor: BiasSensor, options: BiasOptions): { block?: BiasSensorBlock; findings: Finding[]; series: Series[] } {
  const findings: Finding[] = [];
  const series: Series[] = [];
  const results: (AxisResult | undefined)[] = [];
  const cols = AXES.map((ax) => state.columns.get(`${PREFIX[sensor]}_${ax}`));
  if (cols.every((c) => c === undefined)) return { findings, series };
  const own = !(options.scratch && options.scratch.d.length >= state.length);
  const scratch = own ? biasScratch(state) : options.scratch as BiasScratch;
  for (let a = 0; a < 3; a++) {
    const col = cols[a];
    results.push(col ? analyzeAxis(state, col, state.columns.get(`sigma_${PREFIX[sensor]}_${AXES[a]}`), sensor, a, options, findings, scratch) : undefined);
  }
  if (own) giveBackBiasScratch(scratch);
  if (results.every((r) => r === undefined)) return { findings, series };
  const nul = (f: (r: AxisResult) => number): (number | null)[] => results.map((r) => (r && Number.isFinite(f(r)) ? f(r) : null));
  const settle = results.map((r) => (r ? r.settleTime : NaN)).filter((v) => Number.isFinite(v));
  const sig = nul((r) => r.sigmaFinal);
  const block: BiasSensorBlock = {
    final: nul((r) => r.final),
    totalChange: nul((r) => r.totalChange),
    driftPerHour: nul((r) => r.driftPerHour),
    ...(settle.length ? { settleTime: Math.max(...settle) } : {}),
    settleTimeAxes: nul((r) => r.settleTime),
    ...(sig.some((v) => v !== null) ? { sigmaFinal: sig } : {}),
    steps: results.flatMap((r) => (r ? r.steps : [])).sort((p, q) => p.t - q.t),
    stepThreshold: nul((r) => r.h),
    drift: results.map((r) => r?.drift ?? null),
  };
  for (const r of results) if (r) series.push(...r.series);
  return { block, findings, series };
}

/** Analyse one axis (see the module comment for every rule). */
function analyzeAxis(
  state: StateStream, col: Float64Array, sigmaCol: Float64Array | undefined, sensor: BiasSensor, axis: number,
  options: BiasOptions, findings: Finding[], scratch: BiasScratch,
): AxisResult | undefined {
  const t = state.t_s;
  const n = state.length;
  const name = `${sensor} bias ${AXES[axis]}`;
  const work = scratch.work;
  // finite samples with increasing time (and, in the same pass, repeated values between them)
  // The corrections need the median time step of the usable samples; when every record is usable (the usual case)
  // that is the median step of the time column, so it is taken first and the corrections made in the same pass
  // (checked below: otherwise they are made again).
  const dAll = scratch.d;
  const dtAll = scratch.dtAll;
  const count = usableSamples(t, col, n, dtAll, dAll);
  const zeros = scanZeros;
  if (count < 2) return undefined;
  // indices of the usable records: the identity when every record is usable (no column then)
  const idx = count === n ? undefined : indexColumn(scratch, 'idx').subarray(0, usableIndices(t, col, n, indexColumn(scratch, 'idx')));
  const iFirst = idx ? idx[0] : 0;
  const iLast = idx ? idx[count - 1] : n - 1;
  const t0 = t[0] <= t[iFirst] && Number.isFinite(t[0]) ? t[0] : t[iFirst];
  const first = col[iFirst];
  const last = col[iLast];
  let sigmaFinal = NaN;
  if (sigmaCol) for (let i = n - 1; i >= 0; i--) if (Number.isFinite(sigmaCol[i]) && sigmaCol[i] >= 0) { sigmaFinal = sigmaCol[i]; break; }

  // series
  // the usable samples; when every record is usable, views of the columns (no copy: a long log's copies cost more
  // than the analysis)
  let xs: Float64Array;
  let ys: Float64Array;
  let ls: Float64Array;
  if (!idx) {
    xs = t.subarray(0, n); ys = col.subarray(0, n); ls = state.line.subarray(0, n);
  } else {
    xs = new Float64Array(count); ys = new Float64Array(count); ls = new Float64Array(count);
    for (let j = 0; j < count; j++) { xs[j] = t[idx[j]]; ys[j] = col[idx[j]]; ls[j] = state.line[idx[j]]; }
  }
  // the +-3 sigma band is made when the series is first read (lazySeries.ts), lo and hi together
  // (the index column is scratch, reused by the next axis: the band keeps its own copy unless it is the identity)
  let band: { lo: Float64Array; hi: Float64Array } | undefined;
  const bandIdx = sigmaCol && idx ? idx.slice() : undefined;
  const makeBand = (sig: Float64Array): { lo: Float64Array; hi: Float64Array } => {
    if (band) return band;
    const lo = new Float64Array(count);
    const hi = new Float64Array(count);
    for (let j = 0; j < count; j++) { const sg = sig[bandIdx ? bandIdx[j] : j]; lo[j] = ys[j] - 3 * sg; hi[j] = ys[j] + 3 * sg; }
    return (band = { lo, hi });
  };
  const s: Series = lazySeries(
    { key: `bias/${sensor}/${AXES[axis]}`, group: 'bias', label: `${sensor} bias ${AXES[axis]}`, unit: UNIT[sensor], x: xs, y: ys, line: ls },
    sigmaCol ? { lo: () => makeBand(sigmaCol).lo, hi: () => makeBand(sigmaCol).hi } : {},
  );
  const series: Series[] = [s];

  // increments (non-zero: epochs with a bias correction); pos[j] = position in idx of the increment's end sample
  // corrections: increments between consecutive finite samples. When at least 30% of them are exact zeros the log
  // repeats the estimate between updates, and zeros are left out; otherwise (a few zeros, e.g. from rounding in the
  // written log) they are kept. An increment over a longer step than usual (a gap) is divided by sqrt(dt / dt_median):
  // a random-walk-like estimate moves by sqrt(time) over a gap.
  const dropZeros = zeros >= 0.3 * (count - 1);
  let nd = scanCorrections;
  // the usable sample each correction ends at: j + 1 for the scan's corrections, a column when they are made again
  let posCol: Int32Array | undefined;
  if (count !== n || dropZeros) {
    posCol = indexColumn(scratch, 'pos');
    nd = corrections(xs, ys, count, dropZeros, count === n ? dtAll : sampledStepMedian(xs, count, work), dAll, posCol);
  }
  const d = dAll.subarray(0, nd);
  const pos = (j: number): number => (posCol ? posCol[j] : j + 1);
  const result: AxisResult = {
    final: last, totalChange: last - first, driftPerHour: NaN, settleTime: xs[0] - t0, sigmaFinal, steps: [], h: NaN, series,
  };
  if (d.length < 20) {
    result.driftPerHour = driftRate(xs, ys, 0, work);
    return result;
  }
  const ref = d.subarray(d.length >> 1);
  const med = radixMedian(ref);
  const scale = robustScale(ref, med, work);
  if (!(scale > 0)) {
    result.driftPerHour = driftRate(xs, ys, 0, work);
    return result;
  }

  // settling: the first place where two consecutive windows of W corrections both look settled
  const W = Math.min(100, Math.max(10, Math.round(d.length / 200)));
  const settledWindow = (st: number): boolean => {
    let mean = 0;
    let ms = 0;
    for (let j = st; j < st + W; j++) { const v = d[j] - med; mean += v; ms += v * v; }
    mean /= W;
    return Math.sqrt(ms / W) <= 1.25 * scale && (Math.abs(mean) * Math.sqrt(W)) / scale <= 4;
  };
  let settleInc = -1;
  for (let st = 0; st + 2 * W <= d.length; st += Math.max(1, W >> 2)) {
    if (settledWindow(st) && settledWindow(st + W)) { settleInc = st; break; }
  }
  if (settleInc < 0) settleInc = d.length >> 1;
  const settlePos = pos(settleInc) - 1; // the sample before the first settled increment
  result.settleTime = xs[settlePos] - t0;
  // the block medians after settling serve both the drift rate and the drift check (computed once)
  const blocks = xs.length - settlePos >= 3 ? blockMedians(xs, ys, settlePos, 200, work) : undefined;
  result.driftPerHour = blocks ? theilSenSlope(blocks.bt, blocks.bv) * 3600 : NaN;

  // steps: two-sided CUSUM on the normalised settled increments
  const nAfter = d.length - settleInc;
  const h = cusumThresholdForArl(Math.max(nAfter, 2) / options.alpha, 0.5);
  result.h = h;
  const changes = detectChangesScaled(d, settleInc, nAfter, med, scale, h, 0.5);
  const Wb = Math.min(200, Math.max(5, 2 * W));
  const bounds = changes.map((c) => ({ p0: pos(settleInc + c.onset) - 1, p1: pos(settleInc + c.end), c }));
  for (let k = 0; k < bounds.length; k++) {
    const { p0, p1, c } = bounds[k];
    // level before: the Wb samples up to the onset; level after: Wb samples starting two step-durations after the
    // detected end (the estimate is still converging to the new level when the sum peaks), both clipped by neighbours
    const beforeLo = Math.max(k > 0 ? bounds[k - 1].p1 : settlePos, p0 - Wb);
    const limit = k + 1 < bounds.length ? bounds[k + 1].p0 : count - 1;
    const afterLo = Math.min(limit, p1 + 2 * (p1 - p0));
    const afterHi = Math.min(limit, afterLo + Wb);
    const before = radixMedian(ys.subarray(beforeLo, p0 + 1));
    const after = radixMedian(ys.subarray(afterLo, afterHi + 1));
    const size = after - before;
    // the step's time is the first sample that moved (p0 is the last one before the change)
    const first = Math.min(p0 + 1, p1);
    const step: BiasStep = { t: xs[first], axis, size, tEnd: xs[p1], line: ls[first] };
    result.steps.push(step);
    findings.push({
      kind: 'bias-step', severity: 'warning', t: step.t, tEnd: step.tEnd, axis, size, channel: `${sensor}-bias`,
      line: step.line, file: state.file, score: c.peak / h,
      message: `${name} stepped by ${show(sensor, size)} at t = ${step.t.toFixed(3)} s (until ${step.tEnd.toFixed(3)} s): `
        + `two-sided CUSUM on the normalised bias corrections reached ${c.peak.toFixed(1)} against h = ${h.toFixed(1)} `
        + `(false-step probability about ${(options.alpha * 100).toPrecision(2)}% per axis)`,
    });
  }
  if (result.steps.length) {
    series.push({
      key: `bias/${sensor}/${AXES[axis]}/steps`, group: 'bias', label: `${sensor} bias ${AXES[axis]} steps`, unit: UNIT[sensor],
      x: new Float64Array(result.steps.map((st) => st.t)), y: new Float64Array(bounds.map((b) => ys[b.p1])),
      line: new Float64Array(result.steps.map((st) => st.line ?? NaN)),
    });
  }

  // drift against the specification
  const drift = blocks && xs.length - settlePos >= 10
    ? driftCheck(blocks, sensor, sigmaFinal, options.spec, bounds.map((b) => [xs[b.p0], xs[b.p1]] as [number, number]), work)
    : undefined;
  if (drift) {
    result.drift = drift;
    if (drift.ratio > 1) {
      const origin = options.spec.defaulted
        ? `the ${options.spec.spec.origin.replace('preset:', '')} preset (no IMU specification given: consumer-MEMS default, see docs/imu.md)`
        : `the specification (${options.spec.spec.origin})`;
      findings.push({
        kind: 'bias-drift', severity: 'warning', t: drift.t, tEnd: drift.tEnd, axis, size: drift.change, channel: `${sensor}-bias`,
        file: state.file, score: drift.ratio,
        message: `${name} moved ${show(sensor, drift.change)} over ${drift.window_s.toPrecision(3)} s `
          + `(t = ${drift.t.toFixed(1)} to ${drift.tEnd.toFixed(1)} s), more than the ${show(sensor, drift.threshold)} `
          + `that 3 sqrt(K^2 T + (0.664 B)^2 + 2 sigma^2) allows with ${origin}`,
      });
    }
  }
  return result;
}

/** Block medians of (x, y) over [start, end): at most `blocks` points (time = block mean, value = block median). */
function blockMedians(xs: Float64Array, ys: Float64Array, start: number, blocks: number, work: Float64Array): { bt: Float64Array; bv: Float64Array } {
  const count = xs.length - start;
  const nb = Math.max(1, Math.min(blocks, count));
  const size = count / nb;
  const bt = new Float64Array(nb);
  const bv = new Float64Array(nb);
  for (let b = 0; b < nb; b++) {
    const a = start + Math.floor(b * size);
    const e = Math.max(a + 1, start + Math.floor((b + 1) * size));
    bt[b] = rangeSum(xs, a, e) / (e - a);
    // blocks are short: plain selection on a copy in the axis's work column (one column for all blocks)
    work.set(ys.subarray(a, e));
    bv[b] = medianInPlace(work, e - a);
  }
  return { bt, bv };
}

/** xs[a] + ... + xs[e - 1], in that order (a function of its own: called per block, optimised once). */
function rangeSum(xs: Float64Array, a: number, e: number): number {
  let st = 0;
  for (let i = a; i < e; i++) st += xs[i];
  return st;
}

/** Theil-Sen drift rate after `start`, SI units per hour (on at most 200 block medians). */
function driftRate(xs: Float64Array, ys: Float64Array, start: number, work: Float64Array): number {
  if (xs.length - start < 3) return NaN;
  const { bt, bv } = blockMedians(xs, ys, start, 200, work);
  return theilSenSlope(bt, bv) * 3600;
}

/** Plausible change over T seconds: 3 sqrt(K^2 T + (0.664 B)^2 + 2 sigma^2). */
export function plausibleBiasChange(T_s: number, K: number, B: number, sigma = 0): number {
  const f = BIAS_INSTABILITY_FACTOR * B;
  return 3 * Math.sqrt(K * K * T_s + f * f + 2 * sigma * sigma);
}

/** Worst window of the drift check (see the module comment). */
function driftCheck(
  blocks: { bt: Float64Array; bv: Float64Array }, sensor: BiasSensor, sigmaFinal: number, spec: ResolvedSpec,
  stepSpans: [number, number][], work: Float64Array,
): BiasDriftCheck | undefined {
  const { bt, bv } = blocks;
  const span = bt[bt.length - 1] - bt[0];
  if (!(span > 0)) return undefined;
  const K = sensor === 'gyro' ? spec.spec.gyroRateRandomWalk : spec.spec.accRateRandomWalk;
  const B = sensor === 'gyro' ? spec.spec.gyroBiasInstability : spec.spec.accBiasInstability;
  // the estimate's own scatter: consecutive block medians differ by about sqrt(2) times their noise
  const diffs = new Float64Array(Math.max(0, bv.length - 1));
  for (let i = 1; i < bv.length; i++) diffs[i - 1] = bv[i] - bv[i - 1];
  const scatter = diffs.length >= 5 ? madScale(diffs, radixMedian(diffs), work) / Math.SQRT2 : 0;
  const sigma = Math.hypot(Number.isFinite(sigmaFinal) ? sigmaFinal : 0, scatter);
  const blockLen = span / Math.max(1, bt.length - 1);
  const at = (tq: number): number => {
    // linear interpolation of the block medians
    let lo = 0;
    let hi = bt.length - 1;
    if (tq <= bt[0]) return bv[0];
    if (tq >= bt[hi]) return bv[hi];
    while (hi - lo > 1) { const mid = (lo + hi) >> 1; if (bt[mid] <= tq) lo = mid; else hi = mid; }
    const f = (tq - bt[lo]) / (bt[hi] - bt[lo]);
    return bv[lo] + f * (bv[hi] - bv[lo]);
  };
  let worst: BiasDriftCheck | undefined;
  for (const T of [span, 3600, 600, 60]) {
    if (T > span || T < 2 * blockLen) continue;
    const windows = Math.max(1, Math.floor(span / T + 1e-9));
    for (let w = 0; w < windows; w++) {
      const ta = bt[0] + w * T;
      const tb = ta + T;
      if (stepSpans.some(([s0, s1]) => s1 >= ta - blockLen && s0 <= tb + blockLen)) continue;
      const change = Math.abs(at(tb) - at(ta));
      const threshold = plausibleBiasChange(T, K, B, sigma);
      const ratio = change / threshold;
      if (!worst || ratio > worst.ratio) worst = { window_s: T, t: ta, tEnd: tb, change, threshold, ratio };
    }
  }
  return worst;
}

/** Ground-truth attitude (nav_q_body, Hamilton, scalar first) from the state's `gt_q_*` or the reference's `q_*`. */
function truthAttitude(log: NavLog): { t: Float64Array; q: Float64Array[]; n: number } | undefined {
  const fromState = ['gt_q_w', 'gt_q_x', 'gt_q_y', 'gt_q_z'].map((k) => log.state.columns.get(k));
  if (fromState.every((c) => c !== undefined)) return { t: log.state.t_s, q: fromState as Float64Array[], n: log.state.length };
  const ref = log.reference;
  if (ref) {
    const cols = ['q_w', 'q_x', 'q_y', 'q_z'].map((k) => ref.columns.get(k));
    if (cols.every((c) => c !== undefined)) return { t: ref.t_s, q: cols as Float64Array[], n: ref.length };
  }
  return undefined;
}

/**
 * Gyro minus bias against the body rate of the ground-truth attitude. Between consecutive truth samples the body rate
 * is Log(q_k^* q_{k+1}) / dt (q rotates body to navigation, so q_{k+1} = q_k Exp(omega dt)); the raw gyro samples
 * inside the interval are averaged and the logged bias is interpolated at its middle.
 * @param log the run (needs `imu`, the state's `bg_*`, and `gt_q_*` or a reference attitude)
 * @returns per-axis residual statistics, or undefined when the inputs are missing
 */
export function gyroTruthConsistency(log: NavLog): GyroTruthConsistency | undefined {
  const imu = log.imu;
  const truth = truthAttitude(log);
  const bias = [log.state.columns.get('bg_x'), log.state.columns.get('bg_y'), log.state.columns.get('bg_z')];
  if (!imu || imu.length < 2 || !truth || truth.n < 2 || bias.some((b) => b === undefined)) return undefined;
  const g = [imu.gyro_x, imu.gyro_y, imu.gyro_z];
  const qa = new Float64Array(4);
  const qb = new Float64Array(4);
  const qd = new Float64Array(4);
  const w = new Float64Array(3);
  const sum = [0, 0, 0];
  const sum2 = [0, 0, 0];
  const imp = [0, 0, 0];
  const logged = [0, 0, 0];
  let count = 0;
  let p = 0; // imu pointer
  let sp = 0; // state pointer
  const st = log.state.t_s;
  for (let k = 0; k + 1 < truth.n; k++) {
    const ta = truth.t[k];
    const tb = truth.t[k + 1];
    const dt = tb - ta;
    if (!(dt > 0)) continue;
    for (let c = 0; c < 4; c++) { qa[c] = truth.q[c][k]; qb[c] = truth.q[c][k + 1]; }
    if (![...qa, ...qb].every((v) => Number.isFinite(v))) continue;
    const na = Math.hypot(qa[0], qa[1], qa[2], qa[3]);
    const nb = Math.hypot(qb[0], qb[1], qb[2], qb[3]);
    if (Math.abs(na - 1) > 0.1 || Math.abs(nb - 1) > 0.1) continue;
    for (let c = 0; c < 4; c++) { qa[c] /= na; qb[c] /= nb; }
    quatMultiply(qd, quatConjugate(qd, qa), qb);
    quatLog(w, qd);
    // gyro average over [ta, tb)
    while (p < imu.length && imu.t_s[p] < ta) p++;
    let q = p;
    const acc = [0, 0, 0];
    let m = 0;
    while (q < imu.length && imu.t_s[q] < tb) {
      if (Number.isFinite(g[0][q]) && Number.isFinite(g[1][q]) && Number.isFinite(g[2][q])) {
        acc[0] += g[0][q]; acc[1] += g[1][q]; acc[2] += g[2][q]; m++;
      }
      q++;
    }
    if (m === 0) continue;
    // bias at the middle of the interval (linear interpolation in the state stream)
    const tm = (ta + tb) / 2;
    while (sp + 1 < log.state.length && st[sp + 1] <= tm) sp++;
    if (sp + 1 >= log.state.length || st[sp] > tm) continue;
    const f = (tm - st[sp]) / (st[sp + 1] - st[sp]);
    let ok = true;
    const bm = [0, 0, 0];
    for (let c = 0; c < 3; c++) {
      const b0 = (bias[c] as Float64Array)[sp];
      const b1 = (bias[c] as Float64Array)[sp + 1];
      bm[c] = b0 + f * (b1 - b0);
      if (!Number.isFinite(bm[c])) ok = false;
    }
    if (!ok) continue;
    for (let c = 0; c < 3; c++) {
      const rate = w[c] / dt;
      const gm = acc[c] / m;
      const r = gm - bm[c] - rate;
      sum[c] += r; sum2[c] += r * r; imp[c] += gm - rate; logged[c] += bm[c];
    }
    count++;
  }
  if (count === 0) return undefined;
  return {
    intervals: count,
    residualMean: sum.map((s) => s / count),
    residualRms: sum2.map((s) => Math.sqrt(s / count)),
    impliedBias: imp.map((s) => s / count),
    loggedBias: logged.map((s) => s / count),
  };
}

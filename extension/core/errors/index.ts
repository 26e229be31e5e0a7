/**
 * Estimation errors against a reference: the `errors` block of the report, its `inconsistent` findings and the
 * panel's error, NEES and trajectory series. Definitions and conventions: docs/errors.md; per-epoch alignment and
 * error vectors: track.ts; NEES and its windowed test: nees.ts; convergence: convergence.ts; Umeyama alignment
 * behind the absolute trajectory error: umeyama.ts; relative error: relative.ts; Monte Carlo: montecarlo.ts.
 */
import type { NavLog } from '../model';
import type { Finding } from '../report';
import type { AnalysisSettings } from '../settings';
import type { Series, StageOutput } from '../series';
import { chi2Interval } from '../stats/chi2';
import { so3Angle } from '../geometry/so3';
import { ALIGN_IN_GAP, ALIGN_OUTSIDE_SPAN, medianStep, medianStepAtMost } from './align';
import { convergence, SETTLE_FACTOR, type Convergence, type ConvergenceScratch } from './convergence';
import { neesSummary, normalisedErrorAutocorrelations, neesWindows, windowBoundaries, type NeesWindow } from './nees';
import {
  defaultDistanceWindow, relativeErrors, type RelativeErrorStats,
} from './relative';
import { buildErrorTrack, isCompared, type BlockName, type BlockTrack, type ErrorTrack } from './track';
import { umeyamaColumns } from './umeyama';
import { radixMedian } from '../stats/radixMedian';
import { lazySeries } from '../lazySeries';
import { giveBack, reserveScratch, takeFloat64, takeInt32 } from '../scratch';

export { analyzeMonteCarlo, monteCarloSeries, type MonteCarloBlock, type MonteCarloSeries } from './montecarlo';
export { buildErrorTrack, type ErrorTrack } from './track';

/** Expected share of a Gaussian error inside +-3 sigma. */
export const EXPECTED_WITHIN_3_SIGMA = 0.9973;

const RAD2DEG = 180 / Math.PI;

/** NEES figures of one block. */
export interface NeesFigures {
  dof: number;
  mean?: number;
  /** Share of epochs whose NEES lies inside the per-epoch two-sided `confidence` interval of chi2(dof). */
  inside95?: number;
  bounds95: [number, number];
  /** Epochs with a NEES value. */
  count: number;
  /** The windowed test (nees.ts). */
  windows?: {
    count: number;
    /** Share of windows whose average lies inside its `confidence` interval (about 0.95 for a consistent run). */
    inside95?: number;
    flagged: number;
    /** Family-corrected two-sided level of each window. */
    alphaPerWindow: number;
    /** 1 + 2 sum rho_k of the longest segment: epochs per independent value for long windows. */
    correlationFactor?: number;
  };
}

/** Absolute trajectory error after an Umeyama alignment of the estimate onto the reference. */
export interface AteFigures {
  rmse: number;
  median: number;
  max: number;
  dims: number;
  /** 1 unless `alignScale`. */
  scale: number;
  /** Rotation angle of the alignment, degrees. */
  rotationDeg: number;
  translation: number[];
}

/** Relative error over a time and a distance window. */
export interface RpeFigures {
  time?: RelativeErrorStats & { window_s: number };
  distance?: RelativeErrorStats & { window_m: number; rmsePercent?: number };
}

/** Velocity errors (and the figures position errors share). */
export interface VelocityErrors {
  epochs: number;
  rmse?: number;
  /** Horizontal RMSE (first two navigation axes). */
  rmse2d?: number;
  /** Largest error norm. */
  max?: number;
  rmsePerAxis?: number[];
  meanPerAxis?: number[];
  nees?: NeesFigures;
}

/** Position errors: the velocity figures plus the alignment-based ones. */
export interface PositionErrors extends VelocityErrors {
  dims: number;
  ate?: AteFigures;
  rpe?: RpeFigures;
}

/** Orientation errors (angles of the error rotation). */
export interface OrientationErrors {
  epochs: number;
  rmseDeg?: number;
  maxDeg?: number;
  meanDeg?: number;
  /** RMS of each rotation-vector component, degrees. */
  rmsePerAxisDeg?: number[];
  nees?: NeesFigures;
}

/** Figures of one segment (between resets). */
export interface SegmentErrors {
  t: number;
  tEnd: number;
  epochs: number;
  position?: { rmse?: number; nees?: { mean?: number; inside95?: number }; convergence: Convergence };
  velocity?: { rmse?: number; nees?: { mean?: number; inside95?: number }; convergence: Convergence };
  orientation?: { rmseDeg?: number; nees?: { mean?: number; inside95?: number }; convergence: Convergence };
}

/** The report's `errors` block. */
export interface ErrorsBlock {
  /** Epochs in the time window without a reference value (outside its span or in its gaps). */
  excluded: number;
  excludedOutsideSpan: number;
  excludedInGap: number;
  /** Epochs compared (in the window, with a reference value). */
  epochs: number;
  /** Epochs left out by `settings.window`. */
  outsideWindow: number;
  reference: 'state' | 'reference';
  frame: 'ENU' | 'NED';
  /** Offset added to reference stamps, seconds (given or estimated). */
  timeOffset_s: number;
  timeOffsetEstimated: boolean;
  /** Geodetic origin of the local frame when the reference was geodetic (degrees, metres). */
  origin?: { lat: number; lon: number; h: number };
  /** Error conventions used. */
  definition: { attitude: 'nav' | 'body'; group: 'SO3xR3' | 'SE3' | 'SE23' };
  position?: PositionErrors;
  velocity?: VelocityErrors;
  orientation?: OrientationErrors;
  /** NEES of all blocks together, when the full P covers them. */
  joint?: NeesFigures & { states: string[] };
  segments: SegmentErrors[];
  /** Convergence per block in the first segment (convergence.ts; factor k = SETTLE_FACTOR). */
  convergence: { factor: number; position?: Convergence; velocity?: Convergence; orientation?: Convergence };
  /** Share of epochs whose error lies inside +-3 sigma, per axis (expected 0.9973). */
  within3Sigma: { expected: number; position?: (number | null)[]; velocity?: (number | null)[]; orientation?: (number | null)[] };
  notes: string[];
  [extra: string]: unknown;
}

/** Figures of {@link errorFigures}. */
interface ErrorFigures { count: number; rmse?: number; rmse2d?: number; max?: number; rmsePerAxis?: number[]; meanPerAxis?: number[]; meanNorm?: number }

/**
 * RMS of the rows' norms over epochs where every component is finite; also per-axis RMS, mean, max and mean norm
 * (the first two components are the horizontal ones). Also writes each epoch's error norm into `norm` (NaN where a
 * component is not finite), for the convergence.
 */
function errorFigures(err: Float64Array[], i0: number, i1: number, norm: Float64Array): ErrorFigures {
  const d = err.length;
  const horiz = 2;
  let s = 0, s2 = 0, mx = 0, cnt = 0, sn = 0;
  const sa = new Array<number>(d).fill(0), ma = new Array<number>(d).fill(0);
  for (let k = i0; k < i1; k++) {
    let q = 0, qh = 0, ok = true;
    for (let c = 0; c < d; c++) {
      const e = err[c][k];
      if (!Number.isFinite(e)) { ok = false; break; }
      q += e * e; if (c < horiz) qh += e * e;
    }
    if (!ok) { norm[k] = NaN; continue; }
    for (let c = 0; c < d; c++) { sa[c] += err[c][k] * err[c][k]; ma[c] += err[c][k]; }
    const nrm = Math.sqrt(q);
    norm[k] = nrm;
    sn += nrm;
    s += q; s2 += qh; cnt++;
    if (nrm > mx) mx = nrm;
  }
  return figuresOf(cnt, s, s2, mx, sn, sa, ma);
}

/** One pass's results: {@link errorFigures}, and over the same epochs the +-3 sigma shares and the NEES summary. */
interface WindowPass { f: ErrorFigures; within?: (number | null)[]; nees?: ReturnType<typeof neesSummary> }

/**
 * {@link errorFigures}, {@link within3Sigma} and {@link neesSummary} of a block over [i0, i1): in one pass over
 * the columns when the block has three components whose NEES error is the raw one (the usual case: each of the three
 * was a pass of ~5 ms over 250k epochs), else the three functions. Same sums in the same order either way.
 */
function windowPass(b: BlockTrack, i0: number, i1: number, confidence: number, norm: Float64Array): WindowPass {
  const sigma = b.sigma;
  const dof = b.neesErr.length;
  if (b.err.length !== 3 || b.neesErr !== b.err || (sigma && !(sigma[0] && sigma[1] && sigma[2]))) {
    return {
      f: errorFigures(b.err, i0, i1, norm), within: within3Sigma(b, i0, i1),
      nees: b.nees ? neesSummary(b.nees, dof, confidence, i0, i1) : undefined,
    };
  }
  const [lo, hi] = chi2Interval(confidence, dof);
  const o = new Float64Array(WINDOW_PASS_FIGURES);
  windowPass3(b.err, sigma, b.nees, lo, hi, i0, i1, norm, o);
  const f = figuresOf(o[0], o[1], o[2], o[3], o[4], [o[5], o[6], o[7]], [o[8], o[9], o[10]]);
  const within = sigma ? [0, 1, 2].map((c) => (o[14 + c] > 0 ? o[11 + c] / o[14 + c] : null)) : undefined;
  const cnt = o[18];
  const nees = b.nees
    ? (cnt > 0 ? { dof, mean: o[17] / cnt, inside95: o[19] / cnt, bounds95: [lo, hi] as [number, number], count: cnt } : { dof, bounds95: [lo, hi] as [number, number], count: 0 })
    : undefined;
  return { f, within, nees };
}

/** Length of the figures column of {@link windowPass3}. */
const WINDOW_PASS_FIGURES = 20;

/**
 * The loop of {@link windowPass} (a function of its own: see track.ts). Into `o`: [0] count, [1] sum |e|^2,
 * [2] sum of horizontal |e|^2, [3] max |e|, [4] sum |e|, [5..8) sum e_c^2, [8..11) sum e_c, [11..14) epochs within
 * 3 sigma per component, [14..17) epochs with e_c and a positive sigma_c, [17] NEES sum, [18] NEES count,
 * [19] NEES inside [lo, hi]. Writes each epoch's error norm into `norm` (NaN where a component is not finite).
 */
function windowPass3(err: Float64Array[], sigma: Float64Array[] | undefined, nees: Float64Array | undefined, lo: number, hi: number,
  i0: number, i1: number, norm: Float64Array, o: Float64Array): void {
  const [x, y, z] = err;
  const withSigma = !!sigma;
  const [s0, s1, s2] = sigma ?? err;
  const withNees = !!nees;
  const nv = nees ?? x;
  let s = 0, sh = 0, mx = 0, cnt = 0, sn = 0;
  let sa0 = 0, sa1 = 0, sa2 = 0, ma0 = 0, ma1 = 0, ma2 = 0;
  let in0 = 0, in1 = 0, in2 = 0, c0 = 0, c1 = 0, c2 = 0;
  let ns = 0, nc = 0, ni = 0;
  for (let k = i0; k < i1; k++) {
    const e0 = x[k], e1 = y[k], e2 = z[k];
    const f0 = Number.isFinite(e0), f1 = Number.isFinite(e1), f2 = Number.isFinite(e2);
    // one store per epoch whatever the branch (see track.ts)
    let nrm = NaN;
    if (f0 && f1 && f2) {
      const q0 = e0 * e0, q1 = e1 * e1, q2 = e2 * e2;
      const qh = q0 + q1, q = qh + q2;
      sa0 += q0; sa1 += q1; sa2 += q2; ma0 += e0; ma1 += e1; ma2 += e2;
      nrm = Math.sqrt(q);
      sn += nrm;
      s += q; sh += qh; cnt++;
      if (nrm > mx) mx = nrm;
    }
    norm[k] = nrm;
    if (withSigma) {
      const g0 = s0[k], g1 = s1[k], g2 = s2[k];
      if (f0 && g0 > 0) { c0++; if (Math.abs(e0) <= 3 * g0) in0++; }
      if (f1 && g1 > 0) { c1++; if (Math.abs(e1) <= 3 * g1) in1++; }
      if (f2 && g2 > 0) { c2++; if (Math.abs(e2) <= 3 * g2) in2++; }
    }
    if (withNees) {
      const v = nv[k];
      if (Number.isFinite(v)) { ns += v; nc++; if (v >= lo && v <= hi) ni++; }
    }
  }
  o[0] = cnt; o[1] = s; o[2] = sh; o[3] = mx; o[4] = sn;
  o[5] = sa0; o[6] = sa1; o[7] = sa2; o[8] = ma0; o[9] = ma1; o[10] = ma2;
  o[11] = in0; o[12] = in1; o[13] = in2; o[14] = c0; o[15] = c1; o[16] = c2;
  o[17] = ns; o[18] = nc; o[19] = ni;
}

function figuresOf(cnt: number, s: number, s2: number, mx: number, sn: number, sa: number[], ma: number[]): ErrorFigures {
  if (cnt === 0) return { count: 0 };
  return {
    count: cnt, rmse: Math.sqrt(s / cnt), rmse2d: Math.sqrt(s2 / cnt), max: mx,
    rmsePerAxis: sa.map((v) => Math.sqrt(v / cnt)), meanPerAxis: ma.map((v) => v / cnt), meanNorm: sn / cnt,
  };
}

/** Segment boundaries (epoch indices) inside [w0, w1) from the reset times. */
function segmentBounds(t_s: Float64Array, w0: number, w1: number, resets: number[]): number[] {
  const b = [w0];
  const rs = [...resets].filter(Number.isFinite).sort((a, c) => a - c);
  let k = w0;
  for (const r of rs) {
    while (k < w1 && t_s[k] < r) k++;
    if (k > b[b.length - 1] && k < w1) b.push(k);
  }
  b.push(w1);
  return b;
}

function within3Sigma(b: BlockTrack, i0: number, i1: number): (number | null)[] | undefined {
  const sigma = b.sigma;
  if (!sigma) return undefined;
  const out: (number | null)[] = [];
  for (let c = 0; c < b.neesErr.length; c++) {
    const e = b.neesErr[c], s = sigma[c];
    if (!s) { out.push(null); continue; }
    let inside = 0, cnt = 0;
    for (let k = i0; k < i1; k++) {
      const v = e[k], sk = s[k];
      if (!Number.isFinite(v) || !(sk > 0)) continue;
      cnt++;
      if (Math.abs(v) <= 3 * sk) inside++;
    }
    out.push(cnt > 0 ? inside / cnt : null);
  }
  return out;
}

const AXES = ['x', 'y', 'z'];

const shared = new WeakMap<ErrorTrack, { x: Float64Array; line: Float64Array }>();

/** Times and lines of the windowed epochs, one copy shared by every series of a track (never the log's arrays). */
function windowColumns(track: ErrorTrack): { x: Float64Array; line: Float64Array } {
  let c = shared.get(track);
  if (!c) {
    c = { x: track.t_s.slice(track.w0, track.w1), line: track.line.slice(track.w0, track.w1) };
    shared.set(track, c);
  }
  return c;
}

/** A number for a message: 4 significant digits, no exponent for ordinary magnitudes. */
function fmt(v: number): string {
  return Math.abs(v) >= 1e-3 && Math.abs(v) < 1e7 ? String(Number(v.toPrecision(4))) : v.toExponential(3);
}

/** Autocorrelations of the block's normalised error components z = e / sigma over [i0, i1) (nees.ts). */
function blockAutocorrelations(b: BlockTrack, i0: number, i1: number): Float64Array[] {
  return normalisedErrorAutocorrelations(b.neesErr, b.neesErr.map((_, c) => b.sigma?.[c]), i0, i1);
}

/** Windowed NEES test of one block across all segments; fills findings and returns the windows. */
function windowedTest(
  track: ErrorTrack, b: BlockTrack, segs: Segments, settings: AnalysisSettings, findings: Finding[],
): { windows: NeesWindow[]; alpha: number; correlationFactor?: number } {
  const nees = b.nees as Float64Array;
  const dof = b.neesErr.length;
  const perSeg: { bounds: number[]; rs: Float64Array[] }[] = [];
  let total = 0;
  let longest = -1, longestLen = 0, correlationFactor: number | undefined;
  for (let s = 0; s + 1 < segs.bounds.length; s++) {
    const i0 = segs.bounds[s], i1 = segs.bounds[s + 1];
    // the same windows for every block: made once per segment
    const bounds = segs.windows[s] ??= windowBoundaries(track.t_s, i0, i1, settings.window_s, settings.windowUpdates);
    const rs = blockAutocorrelations(b, i0, i1);
    perSeg.push({ bounds, rs });
    total += bounds.length - 1;
    if (i1 - i0 > longestLen) { longestLen = i1 - i0; longest = s; }
  }
  if (longest >= 0) {
    let sum = 0;
    for (const r of perSeg[longest].rs) for (const v of r) sum += v * v;
    correlationFactor = 1 + (2 * sum) / Math.max(1, perSeg[longest].rs.length);
  }
  const alpha = settings.familyAlpha / Math.max(1, total);
  const totalWindows = total;
  const windows: NeesWindow[] = [];
  for (const seg of perSeg) {
    const ws = neesWindows(track.t_s, nees, dof, seg.bounds, seg.rs, settings.confidence, alpha);
    // merge consecutive flagged windows of the same side into one finding
    let run: NeesWindow[] = [];
    const flush = (): void => {
      if (run.length === 0) return;
      const first = run[0], last = run[run.length - 1];
      let s = 0, c = 0, pMin = 1;
      for (const w of run) { s += w.mean * w.count; c += w.count; pMin = Math.min(pMin, w.p ?? 1); } // flagged: p is there
      const mean = s / c;
      const over = first.side === 'overconfident';
      const bound = over ? Math.max(...run.map((w) => w.correctedBounds[1])) : Math.min(...run.map((w) => w.correctedBounds[0]));
      const i0 = track.t_s.indexOf(first.t);
      findings.push({
        kind: 'inconsistent', t: first.t, tEnd: last.tEnd, ...(i0 >= 0 ? { line: track.line[i0] } : {}), file: track.file,
        channel: b.name, side: first.side, score: mean, p: pMin, severity: 'warning',
        message: `Average ${b.name} NEES ${fmt(mean)} over ${c} epochs lies ${over ? 'above' : 'below'} the corrected ` +
          `bound ${fmt(bound)} for ${dof} dof between t = ${fmt(first.t)} s and ${fmt(last.tEnd)} s (${run.length} of ` +
          `${totalWindows} windows; bounds use the errors' autocorrelation and are corrected to a ` +
          `${fmt(settings.familyAlpha * 100)}% false-finding chance per block): the covariance is ` +
          (over ? 'too small for the errors here (overconfident)' : 'too large for the errors here (pessimistic)'),
      });
      run = [];
    };
    for (const w of ws) {
      if (w.flagged && (run.length === 0 || run[run.length - 1].side === w.side)) run.push(w);
      else { flush(); if (w.flagged) run.push(w); }
    }
    flush();
    windows.push(...ws);
  }
  return { windows, alpha, correlationFactor };
}

/** NEES figures of one block, from the summary of its NEES over the window (neesSummary). */
/** Segment boundaries (epoch indices) and, made on first use, the NEES window boundaries of each segment. */
interface Segments { bounds: number[]; windows: (number[] | undefined)[] }

function neesFigures(track: ErrorTrack, b: BlockTrack, sum: ReturnType<typeof neesSummary> | undefined, segs: Segments, settings: AnalysisSettings,
  findings: Finding[], series: Series[]): NeesFigures | undefined {
  if (!b.nees || !sum) return undefined;
  const dof = b.neesErr.length;
  if (sum.count === 0) return undefined;
  const { windows, alpha, correlationFactor } = windowedTest(track, b, segs, settings, findings);
  const inside = windows.filter((w) => w.mean >= w.bounds[0] && w.mean <= w.bounds[1]).length;
  const [lo, hi] = chi2Interval(settings.confidence, dof);
  const nees = b.nees;
  const m = track.w1 - track.w0;
  series.push(lazySeries({
    key: `nees/${b.name}`, group: 'errors', label: `${b.name} NEES (${dof} dof) with the per-epoch ${Math.round(settings.confidence * 100)}% band`,
    unit: '1',
  }, {
    x: () => windowColumns(track).x, y: () => nees.slice(track.w0, track.w1), line: () => windowColumns(track).line,
    lo: () => new Float64Array(m).fill(lo), hi: () => new Float64Array(m).fill(hi),
  }));
  if (windows.length > 0) {
    series.push({
      key: `nees/${b.name}/window`, group: 'errors', label: `${b.name} NEES window averages with their ${Math.round(settings.confidence * 100)}% bounds (effective sample size)`,
      unit: '1', x: Float64Array.from(windows, (w) => (w.t + w.tEnd) / 2), y: Float64Array.from(windows, (w) => w.mean),
      lo: Float64Array.from(windows, (w) => w.bounds[0]), hi: Float64Array.from(windows, (w) => w.bounds[1]),
    });
  }
  return {
    dof, mean: sum.mean, inside95: sum.inside95, bounds95: sum.bounds95, count: sum.count,
    windows: {
      count: windows.length, inside95: windows.length > 0 ? inside / windows.length : undefined,
      flagged: windows.filter((w) => w.flagged).length, alphaPerWindow: alpha, correlationFactor,
    },
  };
}

/** k * src[i0..i1) as a new array (a plain loop: Float64Array.from with a map function is slow). */
function scaledSlice(src: Float64Array, i0: number, i1: number, k: number): Float64Array {
  const out = new Float64Array(i1 - i0);
  for (let i = i0; i < i1; i++) out[i - i0] = src[i] * k;
  return out;
}

function errorSeries(track: ErrorTrack, b: BlockTrack, series: Series[]): void {
  const { w0, w1 } = track;
  const scale = b.name === 'orientation' ? RAD2DEG : 1;
  const unit = b.name === 'position' ? 'm' : b.name === 'velocity' ? 'm/s' : 'deg';
  b.err.forEach((e, c) => {
    const sig = b.sigma?.[c];
    series.push(lazySeries(
      { key: `error/${b.name}/${AXES[c]}`, group: 'errors', label: `${b.name} error ${AXES[c]} (true minus estimate) with +-3 sigma`, unit },
      {
        x: () => windowColumns(track).x, y: () => scaledSlice(e, w0, w1, scale), line: () => windowColumns(track).line,
        ...(sig ? { lo: () => scaledSlice(sig, w0, w1, -3 * scale), hi: () => scaledSlice(sig, w0, w1, 3 * scale) } : {}),
      },
    ));
  });
}

/**
 * Epochs of the window compared with every position coordinate finite in both (ascending), into a scratch index
 * column; returns the count.
 */
function positionEpochs(track: ErrorTrack, out: Int32Array): number {
  const { estP, refP, w0, w1 } = track;
  const d = estP.length;
  let m = 0;
  for (let k = w0; k < w1; k++) {
    if (!isCompared(track, k)) continue;
    let ok = true;
    for (let c = 0; c < d; c++) if (!Number.isFinite(estP[c][k]) || !Number.isFinite(refP[c][k])) { ok = false; break; }
    if (ok) out[m++] = k;
  }
  return m;
}

function ateFigures(track: ErrorTrack, settings: AnalysisSettings, use: Int32Array, count: number, scratch: Float64Array): AteFigures | undefined {
  const d = track.estP.length;
  if (count < d + 1) return undefined;
  const a = umeyamaColumns(track.estP, track.refP, use, count, !!settings.alignScale, scratch);
  if (!a) return undefined;
  let rot: number;
  if (d === 3) rot = so3Angle(a.R);
  else rot = Math.abs(Math.atan2(a.R[2], a.R[0]));
  return {
    rmse: Math.sqrt(a.meanSquaredError), median: radixMedian(a.residualNorms, a.count), max: a.maxResidual, dims: d,
    scale: a.scale, rotationDeg: rot * RAD2DEG, translation: Array.from(a.t),
  };
}

function rpeFigures(track: ErrorTrack, settings: AnalysisSettings, use: Int32Array, count: number, scratch: Float64Array): RpeFigures | undefined {
  if (count < 3) return undefined;
  const used = use.subarray(0, count);
  const inp = { t_s: track.t_s, use: used, est: track.estP, ref: track.refP, estAtt: track.estAtt, refAtt: track.refAtt, scratch };
  const out: RpeFigures = {};
  // relative.ts uses the larger of a tenth of the window and the median step: when counting shows the median is at
  // most that tenth, the tenth itself gives the same tolerance without selecting the median of 250k steps
  const cap = settings.window_s / 10;
  const dt = medianStepAtMost(track.t_s, track.w0, track.w1, cap)
    ? cap : medianStep(track.t_s.subarray(track.w0, track.w1), track.w1 - track.w0, scratch);
  const r = relativeErrors(inp, settings.window_s, dt, (L) => settings.rpeDistance_m ?? defaultDistanceWindow(L));
  if (r.time.count > 0) out.time = { ...r.time, window_s: settings.window_s };
  const D = r.distance_m;
  if (r.distance && r.distance.count > 0) {
    const dist = r.distance;
    out.distance = { ...dist, window_m: D, ...(dist.rmse !== undefined ? { rmsePercent: (100 * dist.rmse) / D } : {}) };
  }
  return out;
}

/** ATE and RPE of the position block, sharing one index column and one scratch column. */
function positionFigures(track: ErrorTrack, settings: AnalysisSettings): { ate?: AteFigures; rpe?: RpeFigures } {
  const m = track.w1 - track.w0;
  const use = takeInt32(m);
  const scratch = takeFloat64(m);
  const count = positionEpochs(track, use);
  const out = { ate: ateFigures(track, settings, use, count, scratch), rpe: rpeFigures(track, settings, use, count, scratch) };
  giveBack(use, scratch);
  return out;
}

/** src[w0..w1) with NaN where the epoch is not compared (a position column may be the log's own). */
function comparedSlice(track: ErrorTrack, src: Float64Array): Float64Array {
  const { w0, w1 } = track;
  const out = new Float64Array(w1 - w0);
  for (let k = w0; k < w1; k++) out[k - w0] = isCompared(track, k) ? src[k] : NaN;
  return out;
}

function trajectorySeries(track: ErrorTrack, series: Series[]): void {
  if (track.estP.length < 2) return;
  // x = east, y = north: ENU (x, y) = (east, north); NED (x, y) = (north, east)
  const [ie, in_] = track.frame === 'NED' ? [1, 0] : [0, 1];
  const { w0, w1 } = track;
  const label = 'from above, x = east (m), y = north (m); points in time order, so x is NOT ascending';
  series.push(lazySeries({ key: 'trajectory/estimate', group: 'trajectory', label: `estimate ${label}`, unit: 'm' }, {
    x: () => comparedSlice(track, track.estP[ie]), y: () => comparedSlice(track, track.estP[in_]), line: () => windowColumns(track).line,
  }));
  if (track.refOwn) {
    const r = track.refOwn;
    let r0 = 0, r1 = r.t_s.length;
    const t0 = track.t_s[w0], t1 = track.t_s[Math.max(w0, w1 - 1)];
    while (r0 < r1 && r.t_s[r0] < t0) r0++;
    while (r1 > r0 && r.t_s[r1 - 1] > t1) r1--;
    series.push({ key: 'trajectory/reference', group: 'trajectory', label: `reference ${label}`, unit: 'm', x: r.p[ie].slice(r0, r1), y: r.p[in_].slice(r0, r1), line: r.line.slice(r0, r1) });
  } else {
    series.push(lazySeries({ key: 'trajectory/reference', group: 'trajectory', label: `reference ${label}`, unit: 'm' }, {
      x: () => comparedSlice(track, track.refP[ie]), y: () => comparedSlice(track, track.refP[in_]), line: () => windowColumns(track).line,
    }));
  }
}

/**
 * Compare the estimate with its reference (`gt_` columns of the state, or `log.reference` at its own rate) and
 * summarise position, velocity and orientation errors, NEES with its windowed consistency test (findings
 * `inconsistent` for channels `position`, `velocity`, `orientation`), convergence per segment, the absolute
 * trajectory error after Umeyama alignment and the relative error. Returns no block when the log has no reference.
 * Never throws for bad data: a failure becomes a `note` finding.
 */
export function analyzeErrors(log: NavLog, settings: AnalysisSettings): StageOutput<ErrorsBlock> {
  try {
    return analyzeErrorsUnsafe(log, settings);
  } catch (e) {
    const message = e instanceof Error ? e.message : String(e);
    return { findings: [{ kind: 'note', severity: 'warning', message: `errors against the reference could not be computed: ${message}` }], series: [] };
  }
}

function analyzeErrorsUnsafe(log: NavLog, settings: AnalysisSettings): StageOutput<ErrorsBlock> {
  const track = buildErrorTrack(log, settings);
  if (!track) return { findings: [], series: [] };
  // the most work columns held at once (norm, convergence level, ATE/RPE scratch, path length, distance errors;
  // convergence and ATE/RPE indices), made together when the pool lacks them (scratch.ts)
  reserveScratch(track.length, 5, 2);
  const findings: Finding[] = [];
  const series: Series[] = [];
  const { w0, w1, t_s, status } = track;
  let outside = 0, gap = 0, compared = 0;
  for (let k = w0; k < w1; k++) {
    if (status[k] === ALIGN_OUTSIDE_SPAN) outside++;
    else if (status[k] === ALIGN_IN_GAP) gap++;
    else compared++;
  }
  const segs = segmentBounds(t_s, w0, w1, log.resets);
  const segments: Segments = { bounds: segs, windows: [] };
  const smooth_s = settings.window_s / 5;

  const block: ErrorsBlock = {
    excluded: outside + gap, excludedOutsideSpan: outside, excludedInGap: gap, epochs: compared,
    outsideWindow: track.length - (w1 - w0), reference: track.source, frame: track.frame,
    timeOffset_s: track.timeOffset_s, timeOffsetEstimated: track.timeOffsetEstimated,
    ...(track.origin ? { origin: { lat: track.origin.lat_deg, lon: track.origin.lon_deg, h: track.origin.h_m } } : {}),
    definition: { attitude: log.conventions.attitudeErrorSide, group: log.conventions.errorGroup ?? 'SO3xR3' },
    segments: [], convergence: { factor: SETTLE_FACTOR }, within3Sigma: { expected: EXPECTED_WITHIN_3_SIGMA },
    notes: [...track.notes],
  };
  if (track.frameAssumed && track.estP.length >= 2) block.notes.push('frame not given: the trajectory plot assumes ENU (x east, y north)');

  // Per block: the window's figures (with each epoch's error norm for the convergence), then every segment's, reusing
  // the window's when a segment is the whole window (the usual run without resets; each pass is ~5 ms on 250k epochs).
  const norm = takeFloat64(track.length);
  const scratch: ConvergenceScratch = { idx: takeInt32(w1 - w0), level: takeFloat64(w1 - w0) };
  const perSegment: { f: ErrorFigures; conv: Convergence; nees?: { mean?: number; inside95?: number } }[][] = [];
  for (const b of track.blocks) {
    const { f, within: w3, nees: summary } = windowPass(b, w0, w1, settings.confidence, norm);
    const dof = b.neesErr.length;
    const nees = neesFigures(track, b, summary, segments, settings, findings, series);
    errorSeries(track, b, series);
    if (w3) block.within3Sigma[b.name] = w3;
    if (b.name === 'position') {
      block.position = {
        epochs: f.count, dims: b.err.length, rmse: f.rmse, rmse2d: f.rmse2d, max: f.max, rmsePerAxis: f.rmsePerAxis,
        meanPerAxis: f.meanPerAxis, nees, ...positionFigures(track, settings),
      };
    } else if (b.name === 'velocity') {
      block.velocity = { epochs: f.count, rmse: f.rmse, rmse2d: f.rmse2d, max: f.max, rmsePerAxis: f.rmsePerAxis, meanPerAxis: f.meanPerAxis, nees };
    } else {
      const meanDeg = f.meanNorm !== undefined ? f.meanNorm * RAD2DEG : undefined;
      block.orientation = {
        epochs: f.count, rmseDeg: f.rmse !== undefined ? f.rmse * RAD2DEG : undefined,
        maxDeg: f.max !== undefined ? f.max * RAD2DEG : undefined, meanDeg,
        rmsePerAxisDeg: f.rmsePerAxis?.map((v) => v * RAD2DEG), nees,
      };
    }
    const segFigures: (typeof perSegment)[number] = [];
    for (let s = 0; s + 1 < segs.length; s++) {
      const i0 = segs[s], i1 = segs[s + 1];
      if (i1 <= i0) continue;
      const whole = i0 === w0 && i1 === w1;
      const seg = whole ? undefined : windowPass(b, i0, i1, settings.confidence, norm); // the same norms again
      const fs = seg ? seg.f : f;
      const conv = convergence(t_s, norm, i0, i1, smooth_s, scratch);
      const ns = seg ? seg.nees : summary;
      segFigures.push({ f: fs, conv, ...(ns && ns.count > 0 ? { nees: { mean: ns.mean, inside95: ns.inside95 } } : {}) });
    }
    perSegment.push(segFigures);
  }
  giveBack(norm, scratch.idx, scratch.level);
  if (track.joint) {
    const s = neesSummary(track.joint.nees, track.joint.dof, settings.confidence, w0, w1);
    if (s.count > 0) {
      block.joint = { ...s, states: track.joint.states };
      const jointNees = track.joint.nees;
      const [lo, hi] = s.bounds95;
      series.push(lazySeries({
        key: 'nees/joint', group: 'errors', label: `joint NEES (${track.joint.dof} dof: ${track.joint.states.join(' ')})`, unit: '1',
      }, {
        x: () => windowColumns(track).x, y: () => jointNees.slice(w0, w1), line: () => windowColumns(track).line,
        lo: () => new Float64Array(w1 - w0).fill(lo), hi: () => new Float64Array(w1 - w0).fill(hi),
      }));
    }
  }

  // segments and convergence, from the figures above
  for (let s = 0, j = 0; s + 1 < segs.length; s++) {
    const i0 = segs[s], i1 = segs[s + 1];
    if (i1 <= i0) continue;
    const seg: SegmentErrors = { t: t_s[i0], tEnd: t_s[i1 - 1], epochs: i1 - i0 };
    track.blocks.forEach((b, bi) => {
      const { f, conv, nees } = perSegment[bi][j];
      if (b.name === 'orientation') {
        const degConv: Convergence = { ...conv };
        if (conv.steadyState !== undefined) degConv.steadyState = conv.steadyState * RAD2DEG;
        if (conv.initialLevel !== undefined) degConv.initialLevel = conv.initialLevel * RAD2DEG;
        seg.orientation = { rmseDeg: f.rmse !== undefined ? f.rmse * RAD2DEG : undefined, nees, convergence: degConv };
        if (s === 0) block.convergence.orientation = degConv;
      } else {
        seg[b.name] = { rmse: f.rmse, nees, convergence: conv };
        if (s === 0) block.convergence[b.name] = conv;
      }
    });
    block.segments.push(seg);
    j++;
  }

  trajectorySeries(track, series);
  return { block, findings, series };
}

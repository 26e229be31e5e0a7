/**
 * Noise figures read off an Allan deviation curve (IEEE Std 952-1997 Annex C and IEEE Std 1554-2005 relations, from
 * memory, corroborated in reference-checks.md sec. 3.1):
 * - white noise N (angle / velocity random walk): the slope -1/2 line sigma = N / sqrt(tau), read at tau = 1 s;
 * - bias instability B: the flat minimum sigma_min = sqrt(2 ln 2 / pi) B = 0.664282 B;
 * - rate random walk K: the slope +1/2 line sigma = K sqrt(tau / 3), read at tau = 3 s.
 *
 * How the lines are found (this module's choice, stated in docs/imu.md): local log-log slopes by central differences;
 * a figure's line is fitted (slope fixed, intercept by the mean of the logs) over the longest contiguous run of
 * points whose local slope lies within +-0.15 of the nominal slope and whose EDF is at least `minEdf`. The white-noise
 * run is taken at the shortest taus on ties, the random-walk run at the longest. Every figure carries the tau range
 * it was read on.
 */
import type { AllanCurve } from './allan';
import { localSlopes } from './allan';
import { DATASHEET_UNIT, SI_UNIT, fromSI, type QuantityKind } from './units';

/** sqrt(2 ln 2 / pi), the flat-floor factor of bias instability (reference-checks.md sec. 3.1, [COMPUTED]). */
export const BIAS_INSTABILITY_FACTOR = Math.sqrt((2 * Math.LN2) / Math.PI);

/** Half-width of the slope window around the nominal -1/2 and +1/2 (common practice; see the module comment). */
export const SLOPE_TOLERANCE = 0.15;

/** A value in some unit. */
export interface UnitValue {
  value: number;
  unit: string;
}

/** One figure read off the curve. */
export interface NoiseFigure {
  /** SI value (see units.ts for the units of each kind), or the input's unit for a plain series. */
  value: number;
  unit: string;
  /** The same value in datasheet units (absent for a plain series). */
  datasheet: UnitValue[];
  /** Tau range the figure was read on, seconds. */
  tauRange_s: [number, number];
  /** Number of curve points used. */
  points: number;
  /** Specification value (SI), when given. */
  spec?: number;
  /** value / spec. */
  ratio?: number;
}

/** The figures of one axis; a figure that cannot be read is absent and a note says why. */
export interface NoiseFigures {
  N?: NoiseFigure;
  B?: NoiseFigure;
  K?: NoiseFigure;
  /** When the curve is still falling at its last point: B is below this (SI), not measurable from this record. */
  bUpperBound?: number;
  notes: string[];
}

/** The sensor a curve belongs to, for units: gyro (rad/s), accel (m/s^2), or a plain series (its own unit). */
export type SensorKind = 'gyro' | 'accel' | 'plain';

/** Specification values to compare with (SI), any of them. */
export interface FigureSpec {
  N?: number;
  B?: number;
  K?: number;
}

/** Options of the read-off. */
export interface ReadOffOptions {
  /** Minimum EDF of a point used in a read-off (5). */
  minEdf?: number;
  /** Unit of a plain series (e.g. 'm'). */
  plainUnit?: string;
}

const KINDS: Record<Exclude<SensorKind, 'plain'>, { N: QuantityKind; B: QuantityKind; K: QuantityKind; extraN: string }> = {
  gyro: { N: 'rateDensity', B: 'rate', K: 'rateRandomWalk', extraN: 'deg/s/sqrt(Hz)' },
  accel: { N: 'accelDensity', B: 'accel', K: 'accelRandomWalk', extraN: 'ug/sqrt(Hz)' },
};

/** Datasheet-unit copies of an SI figure. */
function datasheetCopies(value: number, kind: QuantityKind, extra?: string): UnitValue[] {
  const out: UnitValue[] = [];
  for (const unit of extra ? [DATASHEET_UNIT[kind], extra] : [DATASHEET_UNIT[kind]]) {
    const v = fromSI(value, unit, kind);
    if (v !== undefined) out.push({ value: v, unit });
  }
  return out;
}

/** Longest run of consecutive usable indices whose slope is within tol of `target`; ties by `preferLate`. */
function longestRun(slopes: Float64Array, usable: boolean[], target: number, tol: number, preferLate: boolean): [number, number] | undefined {
  let best: [number, number] | undefined;
  let start = -1;
  const k = slopes.length;
  for (let i = 0; i <= k; i++) {
    const ok = i < k && usable[i] && Math.abs(slopes[i] - target) <= tol;
    if (ok && start < 0) start = i;
    if (!ok && start >= 0) {
      const run: [number, number] = [start, i - 1];
      const len = run[1] - run[0];
      if (!best || len > best[1] - best[0] || (preferLate && len === best[1] - best[0])) best = run;
      start = -1;
    }
  }
  return best;
}

/**
 * Read N, B and K off an Allan deviation curve, in SI and datasheet units, with the tau range of each, compared with
 * a specification when given.
 * @param curve the Allan deviation of one axis
 * @param sensor gyro, accel, or plain (a plain series keeps its own unit and gets no datasheet copies)
 * @param spec specification values (SI) to compare with
 * @param options minimum EDF of a usable point; unit of a plain series
 */
export function readNoiseFigures(curve: AllanCurve, sensor: SensorKind, spec: FigureSpec = {}, options: ReadOffOptions = {}): NoiseFigures {
  const minEdf = options.minEdf ?? 5;
  const k = curve.tau_s.length;
  const notes: string[] = [];
  const out: NoiseFigures = { notes };
  if (k < 2) {
    notes.push(`only ${k} Allan point(s): too short a record to read noise figures`);
    return out;
  }
  const slopes = localSlopes(curve.tau_s, curve.adev);
  const usable: boolean[] = [];
  for (let i = 0; i < k; i++) usable.push(curve.edf[i] >= minEdf && curve.adev[i] > 0 && Number.isFinite(curve.adev[i]));
  const kinds = sensor === 'plain' ? undefined : KINDS[sensor];
  const unitOf = (q: 'N' | 'B' | 'K'): string => (kinds ? SI_UNIT[kinds[q]] : q === 'B' ? options.plainUnit ?? '1' : `${options.plainUnit ?? '1'}${q === 'N' ? '*sqrt(s)' : '/sqrt(s)'}`);
  const make = (q: 'N' | 'B' | 'K', value: number, a: number, b: number): NoiseFigure => {
    const fig: NoiseFigure = {
      value,
      unit: unitOf(q),
      datasheet: kinds ? datasheetCopies(value, kinds[q], q === 'N' ? kinds.extraN : undefined) : [],
      tauRange_s: [curve.tau_s[a], curve.tau_s[b]],
      points: b - a + 1,
    };
    const s = spec[q];
    if (s !== undefined && s > 0 && Number.isFinite(s)) { fig.spec = s; fig.ratio = value / s; }
    return fig;
  };

  // N: slope -1/2, sigma = N / sqrt(tau), so ln N = ln sigma + ln(tau)/2
  const nRun = longestRun(slopes, usable, -0.5, SLOPE_TOLERANCE, false);
  if (nRun) {
    let acc = 0;
    for (let i = nRun[0]; i <= nRun[1]; i++) acc += Math.log(curve.adev[i]) + 0.5 * Math.log(curve.tau_s[i]);
    out.N = make('N', Math.exp(acc / (nRun[1] - nRun[0] + 1)), nRun[0], nRun[1]);
  } else {
    notes.push('no slope -1/2 region (white noise) found: N not read');
  }

  // K: slope +1/2, sigma = K sqrt(tau/3), so ln K = ln sigma - ln(tau/3)/2
  const kRun = longestRun(slopes, usable, 0.5, SLOPE_TOLERANCE, true);
  if (kRun) {
    let acc = 0;
    for (let i = kRun[0]; i <= kRun[1]; i++) acc += Math.log(curve.adev[i]) - 0.5 * Math.log(curve.tau_s[i] / 3);
    out.K = make('K', Math.exp(acc / (kRun[1] - kRun[0] + 1)), kRun[0], kRun[1]);
  } else {
    notes.push('no slope +1/2 region (rate random walk) found: K not read');
  }

  // B: the flat minimum among usable points
  let iMin = -1;
  for (let i = 0; i < k; i++) if (usable[i] && (iMin < 0 || curve.adev[i] < curve.adev[iMin])) iMin = i;
  if (iMin < 0) {
    notes.push(`no Allan point with EDF >= ${minEdf}: B not read`);
    return out;
  }
  let lastUsable = -1;
  let firstUsable = -1;
  for (let i = 0; i < k; i++) if (usable[i]) { if (firstUsable < 0) firstUsable = i; lastUsable = i; }
  const flat = Math.abs(slopes[iMin]) < 0.25;
  const interior = iMin > firstUsable && iMin < lastUsable;
  if (flat || interior) {
    // the tau range: contiguous neighbours within 10% of the minimum
    let a = iMin;
    let b = iMin;
    while (a - 1 >= 0 && usable[a - 1] && curve.adev[a - 1] <= 1.1 * curve.adev[iMin]) a--;
    while (b + 1 < k && usable[b + 1] && curve.adev[b + 1] <= 1.1 * curve.adev[iMin]) b++;
    out.B = make('B', curve.adev[iMin] / BIAS_INSTABILITY_FACTOR, a, b);
  } else if (iMin === lastUsable && slopes[iMin] <= -0.25) {
    out.bUpperBound = curve.adev[iMin] / BIAS_INSTABILITY_FACTOR;
    notes.push(`the curve is still falling at tau = ${curve.tau_s[iMin].toPrecision(3)} s: B is below ${out.bUpperBound.toPrecision(3)} ${unitOf('B')}, a longer static record is needed to read it`);
  } else {
    notes.push('no flat minimum found: B not read');
  }
  return out;
}

/**
 * The IMU stage: bias estimates in the log (report block `bias`) and raw IMU noise by Allan deviation (report block
 * `imu`). Methods and sources: docs/imu.md. Units SI throughout (rad/s, m/s^2, seconds); datasheet-unit copies are
 * marked with their unit.
 */
import type { NavLog } from '../model';
import type { Finding } from '../report';
import type { AnalysisSettings } from '../settings';
import type { Series, StageOutput } from '../series';
import { allanDeviation, type AllanCurve, type AllanOptions } from './allan';
import { analyzeBiasSensor, biasScratch, giveBackBiasScratch, gyroTruthConsistency, type BiasSensorBlock } from './bias';
import { cusumArlTwoSided } from './cusum';
import { readNoiseFigures, type NoiseFigures } from './noiseFigures';
import { resolveSpec, IMU_PRESETS, type ImuSpecField, type ImuSpecInput } from './presets';
import { detectStaticSegments, medianDt } from './staticSegments';

export { allanDeviation, allanDeviationNonOverlapping, type AllanCurve } from './allan';
export { readNoiseFigures, type NoiseFigures, type NoiseFigure } from './noiseFigures';
export { tabularCusum, detectChanges, cusumArlTwoSided, cusumThresholdForArl } from './cusum';
export { toSI, fromSI, parseFigure } from './units';
export { IMU_PRESETS, presetSpec, resolveSpec, specFromInput, type ImuSpecInput } from './presets';
export { detectStaticSegments } from './staticSegments';
export type { BiasSensorBlock, BiasStep } from './bias';

/** Default false-step probability per bias axis. */
export const DEFAULT_BIAS_STEP_ALPHA = 0.01;
/** Reference value k of the step detector (scale units). */
const STEP_K = 0.5;

/** The specification used, as reported (`bias.spec`, `imu.spec`). SI values. */
export interface SpecBlock {
  /** 'settings', 'mapping', 'preset:<name>', or several joined by '+'. */
  origin: string;
  /** True when no specification was given and the preset was used. */
  defaulted: boolean;
  fieldOrigin: Record<ImuSpecField, string>;
  gyroNoiseDensity: number;
  gyroBiasInstability: number;
  gyroRateRandomWalk: number;
  accNoiseDensity: number;
  accBiasInstability: number;
  accRateRandomWalk: number;
  /** Preset fields marked "common practice" (no published grade figure). */
  commonPractice: string[];
}

/** Report block `bias`. */
export interface BiasBlock {
  gyro?: BiasSensorBlock;
  accel?: BiasSensorBlock;
  spec: SpecBlock;
  stepDetector: {
    method: string;
    k: number;
    /** False-step probability per axis of a clean log. */
    alpha: number;
  };
}

/** One axis of the Allan block. */
export interface AllanAxisBlock {
  tau: number[];
  adev: number[];
  lo: number[];
  hi: number[];
  edf: number[];
  figures: Omit<NoiseFigures, 'notes'>;
  notes: string[];
}

/** Report block `imu` (raw IMU noise). */
export interface ImuNoiseBlock {
  /** How the static data were chosen. */
  static: {
    mode: 'declared' | 'detected';
    segments: { t: number; tEnd: number; samples: number }[];
    used?: { t: number; tEnd: number; samples: number };
    tau0: number;
  };
  /** Confidence of lo/hi. */
  confidence: number;
  gyro?: { x: AllanAxisBlock; y: AllanAxisBlock; z: AllanAxisBlock };
  accel?: { x: AllanAxisBlock; y: AllanAxisBlock; z: AllanAxisBlock };
  notes: string[];
}

/** Confidence of the Allan error bars (1-sigma bars; common practice for Allan plots). */
const ALLAN_CONFIDENCE = 0.683;

/**
 * The IMU stage: bias estimates (`bias`) and raw IMU noise (`imu`). Never throws for bad data: an unexpected
 * failure becomes a finding and the blocks computed so far are kept.
 * @param log the run
 * @param settings the analysis settings (`imuPreset`, `imuSpec`, `imuStatic`, `biasStepAlpha`)
 */
export function analyzeBias(log: NavLog, settings: AnalysisSettings): StageOutput<{ bias?: BiasBlock; imu?: ImuNoiseBlock }> {
  const findings: Finding[] = [];
  const series: Series[] = [];
  const out: { bias?: BiasBlock; imu?: ImuNoiseBlock } = {};
  try {
    const resolved = resolveSpec(log.imuSpec, settings.imuSpec as ImuSpecInput | undefined, settings.imuPreset, log.imuSpecRaw);
    for (const p of resolved.problems) {
      findings.push({ kind: 'bad-value', severity: 'warning', message: `IMU specification: ${p}`, ...(settings.map && p.startsWith('mapping') ? { file: settings.map } : {}) });
    }
    const presetName = resolved.spec.origin.split('+').find((o) => o.startsWith('preset:'))?.slice(7);
    const preset = presetName ? IMU_PRESETS[presetName] : undefined;
    const spec: SpecBlock = {
      origin: resolved.spec.origin,
      defaulted: resolved.defaulted,
      fieldOrigin: resolved.fieldOrigin,
      gyroNoiseDensity: resolved.spec.gyroNoiseDensity,
      gyroBiasInstability: resolved.spec.gyroBiasInstability,
      gyroRateRandomWalk: resolved.spec.gyroRateRandomWalk,
      accNoiseDensity: resolved.spec.accNoiseDensity,
      accBiasInstability: resolved.spec.accBiasInstability,
      accRateRandomWalk: resolved.spec.accRateRandomWalk,
      commonPractice: preset
        ? (Object.keys(preset.figures) as ImuSpecField[]).filter((f) => resolved.fieldOrigin[f].startsWith('preset:') && preset.figures[f].commonPractice)
        : [],
    };
    const alphaIn = settings.biasStepAlpha;
    const alpha = alphaIn !== undefined && alphaIn > 0 && alphaIn < 1 ? alphaIn : DEFAULT_BIAS_STEP_ALPHA;
    if (alphaIn !== undefined && alpha !== alphaIn) {
      findings.push({ kind: 'bad-value', severity: 'warning', message: `biasStepAlpha ${alphaIn} is not in (0, 1); ${alpha} used` });
    }
    // one set of work columns for the six axes
    const hasBias = ['bg', 'ba'].some((p) => ['x', 'y', 'z'].some((a) => log.state.columns.has(`${p}_${a}`)));
    const scratch = hasBias ? biasScratch(log.state) : undefined;
    const gyro = analyzeBiasSensor(log.state, 'gyro', { alpha, spec: resolved, scratch });
    const accel = analyzeBiasSensor(log.state, 'accel', { alpha, spec: resolved, scratch });
    if (scratch) giveBackBiasScratch(scratch);
    findings.push(...gyro.findings, ...accel.findings);
    series.push(...gyro.series, ...accel.series);
    if (gyro.block) {
      const c = gyroTruthConsistency(log);
      if (c) gyro.block.consistency = c;
    }
    if (gyro.block || accel.block) {
      out.bias = {
        ...(gyro.block ? { gyro: gyro.block } : {}),
        ...(accel.block ? { accel: accel.block } : {}),
        spec,
        stepDetector: {
          method: `two-sided tabular CUSUM (Page 1954) on the bias corrections normalised by their robust scale; k = ${STEP_K}, `
            + `h per axis such that the in-control ARL (Siegmund) is n/alpha over the n settled corrections `
            + `(e.g. h = 5 gives ARL ${cusumArlTwoSided(5, STEP_K, 0).toFixed(0)})`,
          k: STEP_K,
          alpha,
        },
      };
    }
    const noise = analyzeImuNoise(log, settings, spec, findings, series);
    if (noise) out.imu = noise;
  } catch (err) {
    findings.push({
      kind: 'note', severity: 'error',
      message: `the IMU analysis stopped on an unexpected condition (${err instanceof Error ? err.message : String(err)}); blocks computed before it are kept`,
    });
  }
  return { block: out.bias || out.imu ? out : undefined, findings, series };
}

/** Slice helper that never copies when the range is the whole column. */
function slice(col: Float64Array, start: number, end: number): Float64Array {
  return start === 0 && end === col.length ? col : col.subarray(start, end);
}

/** Allan deviation and noise figures of the raw IMU's static data. */
function analyzeImuNoise(log: NavLog, settings: AnalysisSettings, spec: SpecBlock, findings: Finding[], series: Series[]): ImuNoiseBlock | undefined {
  const imu = log.imu;
  if (!imu || imu.length < 16) return undefined;
  const notes: string[] = [];
  let segments: { start: number; end: number; t_s: number; tEnd_s: number }[];
  let mode: 'declared' | 'detected';
  if (settings.imuStatic) {
    mode = 'declared';
    segments = [{ start: 0, end: imu.length, t_s: imu.t_s[0], tEnd_s: imu.t_s[imu.length - 1] }];
    notes.push('the whole IMU record is taken as static (setting imuStatic)');
  } else {
    mode = 'detected';
    const det = detectStaticSegments(imu, { gyroNoiseDensity: spec.gyroNoiseDensity, accNoiseDensity: spec.accNoiseDensity });
    segments = det.segments;
  }
  const block: ImuNoiseBlock = {
    static: { mode, segments: segments.map((s) => ({ t: s.t_s, tEnd: s.tEnd_s, samples: s.end - s.start })), tau0: NaN },
    confidence: ALLAN_CONFIDENCE,
    notes,
  };
  if (segments.length === 0) {
    notes.push('no static stretch of at least 10 s found in the raw IMU record: no Allan deviation (set imuStatic if the record is static)');
    return block;
  }
  let best = segments[0];
  for (const s of segments) if (s.end - s.start > best.end - best.start) best = s;
  const tau0 = medianDt(imu.t_s, best.start, best.end);
  block.static.tau0 = tau0;
  block.static.used = { t: best.t_s, tEnd: best.tEnd_s, samples: best.end - best.start };
  if (!(tau0 > 0)) {
    notes.push('the static stretch has no usable time step: no Allan deviation');
    return block;
  }
  // two points per octave; octaves only for very long records (each point costs one pass over the samples)
  const opts: AllanOptions = { confidence: ALLAN_CONFIDENCE, perOctave: best.end - best.start > 2_000_000 ? 1 : 2 };
  const sensors = [
    { name: 'gyro' as const, cols: [imu.gyro_x, imu.gyro_y, imu.gyro_z], unit: 'rad/s', spec: { N: spec.gyroNoiseDensity, B: spec.gyroBiasInstability, K: spec.gyroRateRandomWalk } },
    { name: 'accel' as const, cols: [imu.acc_x, imu.acc_y, imu.acc_z], unit: 'm/s^2', spec: { N: spec.accNoiseDensity, B: spec.accBiasInstability, K: spec.accRateRandomWalk } },
  ];
  for (const sensor of sensors) {
    const axes: AllanAxisBlock[] = [];
    for (let a = 0; a < 3; a++) {
      const y = slice(sensor.cols[a], best.start, best.end);
      const curve = allanDeviation(y, tau0, undefined, opts);
      const figures = readNoiseFigures(curve, sensor.name, sensor.spec);
      axes.push(axisBlock(curve, figures));
      const ax = 'xyz'[a];
      series.push({
        key: `allan/${sensor.name}/${ax}`, group: 'allan', label: `${sensor.name} ${ax} Allan deviation`, unit: sensor.unit,
        x: curve.tau_s, y: curve.adev, lo: curve.lo, hi: curve.hi, logLog: true,
      });
      if (!spec.defaulted) {
        for (const q of ['N', 'B', 'K'] as const) {
          const f = figures[q];
          if (f && f.ratio !== undefined && f.ratio > 2) {
            findings.push({
              kind: 'note', severity: 'warning', channel: `${sensor.name}-noise`, axis: a, score: f.ratio,
              t: best.t_s, tEnd: best.tEnd_s,
              message: `${sensor.name} ${ax}: measured ${q} = ${f.value.toPrecision(3)} ${f.unit} is ${f.ratio.toFixed(1)} times the specification (${f.spec?.toPrecision(3)} ${f.unit}), read on tau ${f.tauRange_s[0].toPrecision(3)}-${f.tauRange_s[1].toPrecision(3)} s`,
            });
          }
        }
      }
    }
    block[sensor.name] = { x: axes[0], y: axes[1], z: axes[2] };
  }
  return block;
}

/** One axis's curve and figures in report form (plain arrays). */
function axisBlock(curve: AllanCurve, figures: NoiseFigures): AllanAxisBlock {
  const { notes, ...rest } = figures;
  return {
    tau: Array.from(curve.tau_s),
    adev: Array.from(curve.adev),
    lo: Array.from(curve.lo),
    hi: Array.from(curve.hi),
    edf: Array.from(curve.edf),
    figures: rest,
    notes,
  };
}

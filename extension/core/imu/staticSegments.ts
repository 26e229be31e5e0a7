/**
 * Static-segment detection in raw IMU records: stretches where the sensor does not move, usable for Allan deviation.
 *
 * Method (this module's choice; see docs/imu.md): the record is cut into consecutive windows of `window_s`
 * seconds. A window is static when, on every gyro axis and every accelerometer axis, its sample variance is at most
 * the axis's threshold, and its time steps have no gap. The threshold of an axis is
 *   min( 9 x (5th percentile of that axis's window variances),  (10 N_spec)^2 / dt ),
 * i.e. at most three times the quietest windows' standard deviation, and never more than ten times the
 * specification's white noise at the sampling rate (N^2 / dt is the variance of white noise of density N sampled
 * every dt; common practice). An axis without any value (a gyro-only record) takes no part. Adjacent static windows
 * join into segments.
 */
import type { ImuStream } from '../model';

/** A static stretch of the IMU record: sample indices [start, end) and their times. */
export interface StaticSegment {
  start: number;
  end: number;
  t_s: number;
  tEnd_s: number;
}

/** What the detector found and the thresholds it used. */
export interface StaticDetection {
  segments: StaticSegment[];
  /** Window length used, samples. */
  windowSamples: number;
  /** Variance thresholds per axis (gyro x, y, z in (rad/s)^2, then accel x, y, z in (m/s^2)^2). */
  thresholds: number[];
  /** Median sample interval, seconds. */
  dt_s: number;
}

/** Options of the detector. */
export interface StaticOptions {
  /** Window length, seconds (1). */
  window_s?: number;
  /** Gyro white-noise density from the specification, rad/s/sqrt(Hz) (caps the threshold). */
  gyroNoiseDensity?: number;
  /** Accelerometer white-noise density from the specification, m/s^2/sqrt(Hz). */
  accNoiseDensity?: number;
  /** Shortest segment kept, seconds (10). */
  minDuration_s?: number;
}

/** Median of the positive steps of a time column over [start, end). */
export function medianDt(t: Float64Array, start: number, end: number): number {
  const steps: number[] = [];
  const stride = Math.max(1, Math.floor((end - start) / 200000));
  for (let i = start + stride; i < end; i += stride) {
    const d = t[i] - t[i - 1];
    if (d > 0 && Number.isFinite(d)) steps.push(d);
  }
  if (steps.length === 0) return NaN;
  steps.sort((a, b) => a - b);
  return steps[steps.length >> 1];
}

/** The q-quantile of values (sorted copy; NaN ignored). */
function quantile(values: number[], q: number): number {
  const v = values.filter((x) => Number.isFinite(x)).sort((a, b) => a - b);
  if (v.length === 0) return NaN;
  return v[Math.min(v.length - 1, Math.max(0, Math.floor(q * (v.length - 1))))];
}

/**
 * Find static segments in a raw IMU stream.
 * @param imu the raw IMU samples (body frame)
 * @param options window length, specification noise densities, shortest segment
 */
export function detectStaticSegments(imu: ImuStream, options: StaticOptions = {}): StaticDetection {
  const n = imu.length;
  const t = imu.t_s;
  const dt = medianDt(t, 0, n);
  const axes = [imu.gyro_x, imu.gyro_y, imu.gyro_z, imu.acc_x, imu.acc_y, imu.acc_z];
  if (!(dt > 0) || n < 4) return { segments: [], windowSamples: 0, thresholds: [], dt_s: dt };
  const W = Math.max(8, Math.round((options.window_s ?? 1) / dt));
  const windows = Math.floor(n / W);
  const variances: number[][] = axes.map(() => new Array<number>(windows));
  const gapFree: boolean[] = new Array<boolean>(windows);
  for (let w = 0; w < windows; w++) {
    const s = w * W;
    let ok = true;
    for (let i = s + 1; i < s + W; i++) {
      const d = t[i] - t[i - 1];
      if (!(d > 0) || d > 3 * dt) { ok = false; break; }
    }
    gapFree[w] = ok;
    for (let a = 0; a < 6; a++) {
      const col = axes[a];
      let mean = 0;
      let m2 = 0;
      let c = 0;
      for (let i = s; i < s + W; i++) {
        const v = col[i];
        if (!Number.isFinite(v)) continue;
        c++;
        const d = v - mean;
        mean += d / c;
        m2 += d * (v - mean);
      }
      variances[a][w] = c >= W - 1 ? m2 / (c - 1) : NaN; // a window with missing samples is not static
    }
  }
  const caps = [options.gyroNoiseDensity, options.gyroNoiseDensity, options.gyroNoiseDensity,
    options.accNoiseDensity, options.accNoiseDensity, options.accNoiseDensity]
    .map((N) => (N !== undefined && N > 0 ? (10 * N) ** 2 / dt : Infinity));
  const thresholds = variances.map((v, a) => Math.min(9 * quantile(v, 0.05), caps[a]));
  // an axis with no value at all (e.g. a gyro-only record) takes no part in the test
  const present = variances.map((v) => v.some((x) => Number.isFinite(x)));
  const segments: StaticSegment[] = [];
  const minSamples = Math.max(2 * W, Math.round((options.minDuration_s ?? 10) / dt));
  let runStart = -1;
  for (let w = 0; w <= windows; w++) {
    let isStatic = w < windows && gapFree[w];
    for (let a = 0; isStatic && a < 6; a++) {
      if (!present[a]) continue;
      const v = variances[a][w];
      if (!(v <= thresholds[a])) isStatic = false;
    }
    // a gap between windows also ends a segment
    if (isStatic && runStart >= 0 && w > 0) {
      const d = t[w * W] - t[w * W - 1];
      if (!(d > 0) || d > 3 * dt) {
        pushSegment(segments, runStart * W, w * W, t, minSamples);
        runStart = -1;
      }
    }
    if (isStatic && runStart < 0) runStart = w;
    if (!isStatic && runStart >= 0) {
      pushSegment(segments, runStart * W, w * W, t, minSamples);
      runStart = -1;
    }
  }
  return { segments, windowSamples: W, thresholds, dt_s: dt };
}

/** Keep a segment when it is long enough. */
function pushSegment(out: StaticSegment[], start: number, end: number, t: Float64Array, minSamples: number): void {
  if (end - start >= minSamples) out.push({ start, end, t_s: t[start], tEnd_s: t[end - 1] });
}

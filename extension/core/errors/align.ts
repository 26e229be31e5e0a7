/**
 * Bringing a reference trajectory onto the estimate's epochs.
 *
 * - Time: a reference stamp t_ref is compared with estimate stamps as t_ref + offset_s (the settings'
 *   `timeOffset_s`, or an estimate from the cross-correlation of the two speed profiles).
 * - Interpolation: position and velocity linearly, attitude by slerp, between the two reference samples that
 *   bracket the estimate time. Never across a gap: when the bracketing samples are more than
 *   `MAX_GAP_STEPS` median reference steps apart (or either lacks a value), the epoch is excluded, as are epochs
 *   before the first or after the last reference sample.
 */
import { quatNormalize, quatSlerp } from '../geometry/quat';
import { medianInPlace } from '../stats/median';

/** Largest bracketing interval, in median reference steps, that may be interpolated across. */
export const MAX_GAP_STEPS = 5;

/** Why an epoch has no reference value. */
export const ALIGN_OK = 0;
/** The epoch lies before the first or after the last reference sample. */
export const ALIGN_OUTSIDE_SPAN = 1;
/** The bracketing reference samples are too far apart, or one of them lacks the value. */
export const ALIGN_IN_GAP = 2;

/**
 * Median of the positive steps of an ascending time column (NaN with fewer than two samples).
 * @param scratch optional work column of at least `length - 1` values (overwritten)
 */
export function medianStep(t_s: Float64Array, length: number, scratch?: Float64Array): number {
  const steps = scratch && scratch.length >= length - 1 ? scratch : new Float64Array(Math.max(0, length - 1));
  let n = 0;
  for (let i = 1; i < length; i++) {
    const d = t_s[i] - t_s[i - 1];
    if (d > 0 && Number.isFinite(d)) steps[n++] = d;
  }
  if (n === 0) return NaN;
  return medianInPlace(steps, n);
}

/**
 * Whether {@link medianStep} of t_s[i0..i1) is at most `cap`, decided by counting (one pass, no selection): true when
 * more than half of the positive steps are at most `cap` (then the median, or the mean of the two middle steps, is);
 * false when that count does not show it (the median may still be at most `cap`: compute it then).
 */
export function medianStepAtMost(t_s: Float64Array, i0: number, i1: number, cap: number): boolean {
  let n = 0, below = 0;
  for (let i = i0 + 1; i < i1; i++) {
    const d = t_s[i] - t_s[i - 1];
    if (d > 0 && Number.isFinite(d)) { n++; if (d <= cap) below++; }
  }
  return n > 0 && below >= (n >> 1) + 1;
}

/** Per-epoch bracket of a reference: rows `left`/`right` and fraction `f` in [0, 1], or a status. */
export interface Bracket {
  /** Left reference row per epoch (-1 when excluded). */
  left: Int32Array;
  /** Right reference row per epoch (equal to `left` when the epoch falls on a sample). */
  right: Int32Array;
  /** Interpolation fraction per epoch (0 at `left`, 1 at `right`). */
  fraction: Float64Array;
  /** ALIGN_OK, ALIGN_OUTSIDE_SPAN or ALIGN_IN_GAP per epoch. */
  status: Uint8Array;
}

/**
 * Find, for every estimate time, the two usable reference rows around it. Rows with `valid[i] = 0` are skipped,
 * so dropped rows widen the interval around them and count towards the gap test.
 * @param estT_s estimate times (normally ascending)
 * @param refT_s reference times in their own base (ascending; `offset_s` is added)
 * @param valid reference rows usable for interpolation (e.g. position finite)
 * @param maxGap_s largest allowed spacing between the two bracketing rows
 */
export function bracketTimes(
  estT_s: Float64Array, estLength: number,
  refT_s: Float64Array, refLength: number, offset_s: number,
  valid: Uint8Array, maxGap_s: number,
): Bracket {
  const left = new Int32Array(estLength).fill(-1);
  const right = new Int32Array(estLength).fill(-1);
  const fraction = new Float64Array(estLength);
  const status = new Uint8Array(estLength);
  const rows: number[] = [];
  for (let i = 0; i < refLength; i++) if (valid[i] === 1 && Number.isFinite(refT_s[i])) rows.push(i);
  // Reference stamps going backwards (a time-backwards finding elsewhere) are put in time order here.
  for (let m = 1; m < rows.length; m++) {
    if (refT_s[rows[m]] < refT_s[rows[m - 1]]) { rows.sort((a, b) => refT_s[a] - refT_s[b]); break; }
  }
  const n = rows.length;
  // The span is that of the whole reference (usable or not): an epoch next to dropped rows at the ends is in a gap.
  let first = Infinity, last = -Infinity;
  for (let i = 0; i < refLength; i++) {
    const t = refT_s[i];
    if (t < first) first = t;
    if (t > last) last = t;
  }
  first += offset_s; last += offset_s;
  const tv = (m: number): number => refT_s[rows[m]] + offset_s;
  let j = 0;
  for (let k = 0; k < estLength; k++) {
    const t = estT_s[k];
    if (!(t >= first && t <= last)) { status[k] = ALIGN_OUTSIDE_SPAN; continue; }
    if (n === 0 || t < tv(0) || t > tv(n - 1)) { status[k] = ALIGN_IN_GAP; continue; }
    if (j > 0 && tv(j) > t) j = 0; // estimate times went backwards: restart the search
    while (j < n - 1 && tv(j + 1) <= t) j++;
    if (tv(j) === t) { left[k] = right[k] = rows[j]; fraction[k] = 0; continue; }
    // here tv(j) < t < tv(j + 1)
    const span = tv(j + 1) - tv(j);
    if (!(span <= maxGap_s)) { status[k] = ALIGN_IN_GAP; continue; }
    left[k] = rows[j]; right[k] = rows[j + 1]; fraction[k] = (t - tv(j)) / span;
  }
  return { left, right, fraction, status };
}

/** Linear interpolation of one reference column at the bracketed epochs (NaN where excluded). */
export function interpolateColumn(col: Float64Array, br: Bracket, out: Float64Array): Float64Array {
  for (let k = 0; k < out.length; k++) {
    const i = br.left[k];
    if (i < 0) { out[k] = NaN; continue; }
    const f = br.fraction[k];
    out[k] = f === 0 ? col[i] : col[i] + f * (col[br.right[k]] - col[i]);
  }
  return out;
}

/**
 * Slerp of reference quaternions (scalar first, columns w, x, y, z) at the bracketed epochs; the four output
 * columns are NaN where excluded or where a reference quaternion is not finite.
 */
export function interpolateAttitude(
  qw: Float64Array, qx: Float64Array, qy: Float64Array, qz: Float64Array, br: Bracket,
  out: [Float64Array, Float64Array, Float64Array, Float64Array],
): void {
  const a = new Float64Array(4), b = new Float64Array(4), r = new Float64Array(4);
  for (let k = 0; k < out[0].length; k++) {
    const i = br.left[k];
    if (i < 0) { out[0][k] = out[1][k] = out[2][k] = out[3][k] = NaN; continue; }
    a[0] = qw[i]; a[1] = qx[i]; a[2] = qy[i]; a[3] = qz[i];
    quatNormalize(a, a);
    if (br.fraction[k] === 0) {
      r.set(a);
    } else {
      const i1 = br.right[k];
      b[0] = qw[i1]; b[1] = qx[i1]; b[2] = qy[i1]; b[3] = qz[i1];
      quatNormalize(b, b);
      quatSlerp(r, a, b, br.fraction[k]);
    }
    out[0][k] = r[0]; out[1][k] = r[1]; out[2][k] = r[2]; out[3][k] = r[3];
  }
}

/** Speed (m/s) per sample: from velocity columns when given, else central differences of position. */
export function speedProfile(
  t_s: Float64Array, length: number,
  pos: (Float64Array | undefined)[], vel: (Float64Array | undefined)[],
): Float64Array {
  const out = new Float64Array(length).fill(NaN);
  const useVel = vel.length > 0 && vel.every((c) => c !== undefined);
  for (let i = 0; i < length; i++) {
    let s2 = 0;
    if (useVel) {
      for (const c of vel) { const v = (c as Float64Array)[i]; s2 += v * v; }
    } else {
      const i0 = Math.max(0, i - 1), i1 = Math.min(length - 1, i + 1);
      const dt = t_s[i1] - t_s[i0];
      if (!(dt > 0)) continue;
      for (const c of pos) {
        if (!c) { s2 = NaN; break; }
        const d = (c[i1] - c[i0]) / dt;
        s2 += d * d;
      }
    }
    out[i] = Math.sqrt(s2);
  }
  return out;
}

/** Sample a series at uniform times by linear interpolation (NaN outside its span or across NaNs). */
function resample(t_s: Float64Array, y: Float64Array, length: number, t0: number, dt: number, n: number): Float64Array {
  const out = new Float64Array(n).fill(NaN);
  let j = 0;
  for (let k = 0; k < n; k++) {
    const t = t0 + k * dt;
    if (t < t_s[0] || t > t_s[length - 1]) continue;
    while (j < length - 2 && t_s[j + 1] < t) j++;
    const span = t_s[j + 1] - t_s[j];
    const f = span > 0 ? (t - t_s[j]) / span : 0;
    out[k] = y[j] + f * (y[j + 1] - y[j]);
  }
  return out;
}

/**
 * Estimate the time offset (seconds, to be added to reference stamps) that best lines up the two speed
 * profiles: both are resampled on a common grid (the estimate's median step), the normalised cross-correlation
 * is evaluated for every lag within +-maxLag_s, and the best lag is refined by a parabola through its
 * neighbours. Returns NaN when the overlap is too short (under 20 grid points) or the speeds do not vary.
 */
export function estimateTimeOffset(
  estT_s: Float64Array, estSpeed: Float64Array, estLength: number,
  refT_s: Float64Array, refSpeed: Float64Array, refLength: number,
  maxLag_s: number,
): number {
  if (estLength < 3 || refLength < 3) return NaN;
  const dt = medianStep(estT_s, estLength);
  if (!(dt > 0)) return NaN;
  const t0 = Math.min(estT_s[0], refT_s[0]) - maxLag_s;
  const t1 = Math.max(estT_s[estLength - 1], refT_s[refLength - 1]) + maxLag_s;
  const n = Math.min(2_000_000, Math.floor((t1 - t0) / dt) + 1);
  const a = resample(estT_s, estSpeed, estLength, t0, dt, n);
  const b = resample(refT_s, refSpeed, refLength, t0, dt, n);
  const maxLag = Math.max(1, Math.round(maxLag_s / dt));
  const corr = new Float64Array(2 * maxLag + 1).fill(NaN);
  for (let L = -maxLag; L <= maxLag; L++) {
    // offset o = L dt: reference value at time t - o is compared with the estimate at t
    let sa = 0, sb = 0, saa = 0, sbb = 0, sab = 0, m = 0;
    for (let k = 0; k < n; k++) {
      const kb = k - L;
      if (kb < 0 || kb >= n) continue;
      const x = a[k], y = b[kb];
      if (!Number.isFinite(x) || !Number.isFinite(y)) continue;
      sa += x; sb += y; saa += x * x; sbb += y * y; sab += x * y; m++;
    }
    if (m < 20) continue;
    const va = saa - (sa * sa) / m, vb = sbb - (sb * sb) / m;
    if (!(va > 0 && vb > 0)) continue;
    corr[L + maxLag] = (sab - (sa * sb) / m) / Math.sqrt(va * vb);
  }
  let best = -1;
  for (let i = 0; i < corr.length; i++) if (Number.isFinite(corr[i]) && (best < 0 || corr[i] > corr[best])) best = i;
  if (best < 0) return NaN;
  let shift = 0;
  if (best > 0 && best < corr.length - 1 && Number.isFinite(corr[best - 1]) && Number.isFinite(corr[best + 1])) {
    const c0 = corr[best - 1], c1 = corr[best], c2 = corr[best + 1];
    const den = c0 - 2 * c1 + c2;
    if (den < 0) shift = (0.5 * (c0 - c2)) / den;
  }
  return (best - maxLag + shift) * dt;
}

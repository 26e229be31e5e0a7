/**
 * Page's cumulative-sum (CUSUM) change detection (E. S. Page, "Continuous inspection schemes", Biometrika 41, 1954).
 *
 * Conventions (stated once, here):
 * - Tabular form, as in Montgomery & Runger, Applied Statistics and Probability for Engineers, 3rd ed., sec. 16-10
 *   (reference-checks.md sec. 7.1): s_H(i) = max(0, x_i - (mu0 + K) + s_H(i-1)),
 *   s_L(i) = max(0, (mu0 - K) - x_i + s_L(i-1)), both starting at 0; n_H, n_L count the consecutive periods since
 *   the sum last was zero; an alarm is raised when either sum exceeds H.
 * - The step detector works on a standardised series z (mean 0, unit scale when nothing changes), so K = k and
 *   H = h in units of the scale: k = 0.5 (tuned to a shift of one scale unit), h chosen from the false-alarm rate.
 * - False-alarm rate through the in-control average run length ARL0 (Siegmund's approximation, reference-checks.md
 *   sec. 7.1): one side ARL = (exp(-2 D b) + 2 D b - 1) / (2 D^2), D = delta - k, b = h + 1.166 (D = 0: b^2);
 *   two-sided 1/ARL = 1/ARL+ + 1/ARL-. Over n in-control samples the chance of any false alarm is about
 *   1 - exp(-n / ARL0) <= n / ARL0 (run length roughly exponential for large ARL0; from memory, common practice).
 */

/** The tabular CUSUM of a series. */
export interface TabularCusum {
  sH: Float64Array;
  sL: Float64Array;
  nH: Int32Array;
  nL: Int32Array;
  /** Indices where s_H or s_L exceeds H. */
  alarms: number[];
}

/**
 * Tabular CUSUM exactly as Montgomery & Runger define it (see the module comment).
 * @param x the observations
 * @param mu0 the in-control mean
 * @param K the reference value (allowance), in the unit of x
 * @param H the decision interval, in the unit of x
 */
export function tabularCusum(x: ArrayLike<number>, mu0: number, K: number, H: number): TabularCusum {
  const n = x.length;
  const sH = new Float64Array(n);
  const sL = new Float64Array(n);
  const nH = new Int32Array(n);
  const nL = new Int32Array(n);
  const alarms: number[] = [];
  let h = 0;
  let l = 0;
  let ch = 0;
  let cl = 0;
  for (let i = 0; i < n; i++) {
    h = Math.max(0, x[i] - (mu0 + K) + h);
    l = Math.max(0, mu0 - K - x[i] + l);
    ch = h > 0 ? ch + 1 : 0;
    cl = l > 0 ? cl + 1 : 0;
    sH[i] = h; sL[i] = l; nH[i] = ch; nL[i] = cl;
    if (h > H || l > H) alarms.push(i);
  }
  return { sH, sL, nH, nL, alarms };
}

/**
 * Siegmund's approximation of the one-sided (upper) CUSUM average run length for a standardised mean shift delta.
 * @param h decision interval in scale units
 * @param k reference value in scale units
 * @param delta mean shift in scale units (0 = in control)
 */
export function cusumArlOneSided(h: number, k: number, delta: number): number {
  const D = delta - k;
  const b = h + 1.166;
  if (Math.abs(D) < 1e-12) return b * b;
  return (Math.exp(-2 * D * b) + 2 * D * b - 1) / (2 * D * D);
}

/**
 * Two-sided CUSUM average run length (Siegmund's approximation, sides combined by 1/ARL = 1/ARL+ + 1/ARL-).
 * @param h decision interval in scale units
 * @param k reference value in scale units
 * @param delta mean shift in scale units (0 = in control: ARL0)
 */
export function cusumArlTwoSided(h: number, k: number, delta: number): number {
  const up = cusumArlOneSided(h, k, delta);
  const down = cusumArlOneSided(h, k, -delta);
  return 1 / (1 / up + 1 / down);
}

/**
 * The decision interval h (scale units) whose two-sided in-control ARL equals `arl0` (bisection; h in [0, 100]).
 * @param arl0 wanted in-control average run length, samples
 * @param k reference value in scale units
 */
export function cusumThresholdForArl(arl0: number, k: number): number {
  let lo = 0;
  let hi = 100;
  for (let it = 0; it < 200; it++) {
    const mid = (lo + hi) / 2;
    if (cusumArlTwoSided(mid, k, 0) < arl0) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

/** A change found by the two-sided detector. */
export interface ChangePoint {
  /** First index of the run that raised the alarm (the estimated onset). */
  onset: number;
  /** Index where the alarm was raised. */
  alarm: number;
  /** Index where the sum peaked (the estimated end of the change), after which the detector restarts. */
  end: number;
  /** +1 for an upward change, -1 for a downward one. */
  direction: 1 | -1;
  /** Peak of the cumulative sum, scale units. */
  peak: number;
}

/**
 * Two-sided CUSUM change detection on a standardised series z (in-control mean 0, scale 1).
 * After an alarm the run is followed while its sum stays positive; the change ends at the sum's peak, and both sums
 * restart from zero after it. Each side's onset is the first index of its run (index - n + 1).
 * @param z the standardised series
 * @param h decision interval (scale units)
 * @param k reference value (scale units), usually 0.5
 */
export function detectChanges(z: ArrayLike<number>, h: number, k: number): ChangePoint[] {
  // (z - 0) / 1 is z exactly, so this is the same detector on the same values
  return detectChangesScaled(z, 0, z.length, 0, 1, h, k);
}

/**
 * {@link detectChanges} on z_i = (x[from + i] - center) / scale for i < n, standardised on the fly (no normalised
 * copy, no pass of its own). Indices in the result are relative to `from`.
 * @param x the raw series
 * @param from first index of x used
 * @param n number of values used
 * @param center in-control centre, in the unit of x
 * @param scale in-control scale, in the unit of x
 * @param h decision interval (scale units)
 * @param k reference value (scale units)
 */
export function detectChangesScaled(x: ArrayLike<number>, from: number, n: number, center: number, scale: number, h: number, k: number): ChangePoint[] {
  const out: ChangePoint[] = [];
  let sh = 0;
  let sl = 0;
  // Where each sum was last seen at zero (checked every 4096 values, and at each restart): its run length at an
  // alarm is then recounted from there, not from the restart (a zero sum means a zero run length, so the recount is
  // exact).
  let zeroH = 0;
  let zeroL = 0;
  let i = 0;
  while (i < n) {
    if ((i & 4095) === 0) {
      if (sh === 0) zeroH = i;
      if (sl === 0) zeroL = i;
    }
    const v = (x[from + i] - center) / scale;
    if (v - v === 0) { // finite
      // the positive part (see the note below detectChangesScaled)
      const a = sh + v - k;
      const b = sl - v - k;
      sh = a < 8e307 ? (a + Math.abs(a)) * 0.5 : Math.max(0, a);
      sl = b < 8e307 ? (b + Math.abs(b)) * 0.5 : Math.max(0, b);
    }
    if (sh > h || sl > h) {
      const change = followChange(x, from, n, center, scale, h, k, i, sh, sl, zeroH, zeroL);
      out.push(change);
      sh = 0; sl = 0;
      i = change.end + 1;
      zeroH = i;
      zeroL = i;
      continue;
    }
    i++;
  }
  return out;
}

// The positive part max(0, a), written out where the sums are updated, without a branch: (a + |a|) / 2 is exactly a
// for 0 < a < 2^1023 and +0 for a <= 0 (NaN stays NaN); Math.max only for the (never met) larger values. Branchless
// because the sign of a CUSUM step is a coin flip on in-control data: the branch of Math.max was mispredicted half
// the time and made the pass 3x slower (measured); written out because the first call runs unoptimised for a while
// and a call per value costs more there than the arithmetic.

/**
 * Lengths of the current runs of positive upper and lower sums at index i (steps with a finite value whose sum
 * stayed above zero), found by running the sums again from `start`, a place where the sum in question was zero (or
 * the restart): needed only at an alarm, so the main pass keeps no counters. Only the side that starts at zero at
 * `start` is exact.
 */
function runLengths(x: ArrayLike<number>, from: number, center: number, scale: number, k: number, start: number, i: number): [number, number] {
  let sh = 0;
  let sl = 0;
  let nh = 0;
  let nl = 0;
  for (let j = start; j <= i; j++) {
    const v = (x[from + j] - center) / scale;
    if (v - v === 0) {
      // the positive part (see the note below detectChangesScaled)
      const a = sh + v - k;
      const b = sl - v - k;
      sh = a < 8e307 ? (a + Math.abs(a)) * 0.5 : Math.max(0, a);
      sl = b < 8e307 ? (b + Math.abs(b)) * 0.5 : Math.max(0, b);
      nh = sh > 0 ? nh + 1 : 0;
      nl = sl > 0 ? nl + 1 : 0;
    }
  }
  return [nh, nl];
}

/** The change whose alarm was raised at i: its side, onset, and the peak of its sum (followed while positive). */
function followChange(
  x: ArrayLike<number>, from: number, n: number, center: number, scale: number, h: number, k: number,
  i: number, sh: number, sl: number, zeroH: number, zeroL: number,
): ChangePoint {
  const up = sh - h >= sl - h;
  const direction: 1 | -1 = up ? 1 : -1;
  const onset = i - (up ? runLengths(x, from, center, scale, k, zeroH, i)[0] : runLengths(x, from, center, scale, k, zeroL, i)[1]) + 1;
  // follow the run to its peak
  let s = up ? sh : sl;
  let peak = s;
  let end = i;
  for (let j = i + 1; j < n; j++) {
    const w = (x[from + j] - center) / scale;
    if (!(w - w === 0)) continue;
    const a = s + (up ? w : -w) - k;
    s = a < 8e307 ? (a + Math.abs(a)) * 0.5 : Math.max(0, a); // the positive part (note below detectChangesScaled)
    if (s > peak) { peak = s; end = j; }
    if (s === 0) break;
  }
  return { onset, alarm: i, end, direction, peak };
}

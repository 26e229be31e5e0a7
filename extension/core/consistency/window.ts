/**
 * Time-average NIS over windows (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4): the average of K independent
 * chi-square(dof) values has K * mean ~ chi-square(K * dof), so its two-sided bounds are chi2(K dof)/K.
 *
 * Two uses, both from one prefix sum over the accepted updates (O(n), no allocation in the loops):
 * 1. The sliding average ending at every update, with its uncorrected band at `confidence`, for the panel and for
 *    the share of windows inside their 95% band (about 95% for a consistent filter).
 * 2. The `inconsistent` test. Sliding windows overlap, so testing each of them at 5% would flag almost every
 *    consistent log. Instead the log is cut into windows of the same size placed every HALF window (each update lies
 *    in two of them, so a burst straddling a boundary is still seen whole by one), and every such window is tested
 *    against bounds at confidence 1 - familyAlpha / M, where M is the number of non-empty tested windows.
 *    By the union bound (Bonferroni), the probability that a consistent log raises any `inconsistent` finding in the
 *    channel is at most familyAlpha (1%), whatever the dependence between overlapping windows. Adjacent flagged
 *    windows on the same side are merged into one finding.
 *
 * Windows are in seconds (`window_s`, window (t - w, t] for the sliding average, [s, s + w) for tested windows) or,
 * when `windowUpdates` is set, in updates. Times are expected in non-decreasing order; a backwards step only
 * widens a window, it never fails.
 *
 * Segments: both functions take optional `breaks` (indices where a filter restart starts a new segment, from
 * core/resets/segments.ts). No window straddles a break: the sliding average starts afresh after it (its first
 * windows are short again) and the tested windows are placed from each segment's start; M counts the windows of
 * every segment, so the family-wise bound holds for the whole channel.
 */
import { chi2Cdf, chi2Interval, chi2IntervalLower, chi2IntervalUpper, chi2Sf } from '../stats/chi2';

/** Window definition: seconds or a count of updates. */
export type WindowSpec = { kind: 'seconds'; size: number } | { kind: 'updates'; size: number };

/** The sliding average at every accepted update. */
export interface SlidingAverage {
  /** Average NIS of the window ending at each update. */
  mean: Float64Array;
  /** Number of updates in that window. */
  count: Float64Array;
  /** Band at `confidence` for that count: chi2(count * dof) / count (NaN for the short windows at the start). */
  lo: Float64Array;
  hi: Float64Array;
  /** Windows that span the full window size (the first ones are shorter). */
  full: number;
  /** Full windows whose average lies inside the two-sided 95% bounds for their count. */
  fullInside95: number;
}

/** A maximal run of tested windows flagged on the same side. */
export interface InconsistentRun {
  side: 'overconfident' | 'pessimistic';
  /** Index (into the accepted arrays) of the first and last update covered. */
  first: number;
  last: number;
  /** The most extreme flagged window: its average, count and bound. */
  mean: number;
  count: number;
  bound: number;
  /** Chi-square tail probability of that window's sum (upper tail when overconfident, lower when pessimistic). */
  p: number;
  windows: number;
}

/** Result of the corrected window test. */
export interface WindowTest {
  /** Number of non-empty windows tested (M). */
  tests: number;
  /** Per-window two-sided false-alarm probability, familyAlpha / M. */
  alphaPerTest: number;
  runs: InconsistentRun[];
}

/**
 * Memoised two-sided bounds of an average of `count` chi-square(dof) values at one confidence, in typed arrays
 * indexed by count (no allocation or hashing per lookup in the hot loops; a quantile costs tens of microseconds).
 */
class BoundsCache {
  private lo = new Float64Array(0);
  private hi = new Float64Array(0);
  constructor(private readonly confidence: number, private readonly dof: number) {}
  /** Make sure `count` is cached; then read `lower(count)` and `upper(count)`. */
  ensure(count: number): void {
    if (count >= this.lo.length) {
      const size = Math.max(count + 1, this.lo.length * 2, 16);
      const lo = new Float64Array(size).fill(NaN);
      const hi = new Float64Array(size).fill(NaN);
      lo.set(this.lo);
      hi.set(this.hi);
      this.lo = lo;
      this.hi = hi;
    }
    if (Number.isNaN(this.lo[count])) {
      const b = chi2Interval(this.confidence, this.dof * count);
      this.lo[count] = b[0] / count;
      this.hi[count] = b[1] / count;
    }
  }
  lower(count: number): number { return this.lo[count]; }
  upper(count: number): number { return this.hi[count]; }
}

/** Relative margin on the brackets of {@link BracketedBound}: far above the round-off of a quantile. */
const BRACKET_MARGIN = 1e-9;

/**
 * One end of the bounds BoundsCache gives (the lower or the upper end of the average's interval), for counts in
 * [kMin, kMax], computed only where a window's decision needs it.
 * A chi-square(nu + d) variable is a chi-square(nu) one plus an independent non-negative one, so every quantile
 * q_p(nu) grows with nu; for counts k1 < k < k2 the average's bound b(k) = q(k dof) / k therefore lies in
 * [b(k1) k1 / k, b(k2) k2 / k]. With the bounds of kMin and kMax computed first, most windows lie clearly on one
 * side of these brackets and need no quantile of their own (each costs ~0.1 ms: hundreds of them were a large part
 * of the consistency stage); the rest are computed exactly and tighten the brackets of their neighbours.
 * Decisions are those of the exact bound: a bracket is used only when the value is BRACKET_MARGIN clear of it.
 */
class BracketedBound {
  private readonly value: Float64Array;
  private readonly done: Uint8Array;
  /** Nearest count (offset from kMin) below / above whose bound is computed; -1 when none. */
  private readonly below: Int32Array;
  private readonly above: Int32Array;
  constructor(
    private readonly quantile: (confidence: number, dof: number) => number,
    private readonly confidence: number, private readonly dof: number, private readonly kMin: number, kMax: number,
  ) {
    const size = kMax - kMin + 1;
    this.value = new Float64Array(size);
    this.done = new Uint8Array(size);
    this.below = new Int32Array(size).fill(-1);
    this.above = new Int32Array(size).fill(-1);
    this.exact(kMin);
    this.exact(kMax);
  }
  /** The exact bound of `count`, computed on first use (as BoundsCache: quantile of count * dof, over count). */
  exact(count: number): number {
    const o = count - this.kMin;
    if (this.done[o]) return this.value[o];
    const v = this.quantile(this.confidence, this.dof * count) / count;
    this.value[o] = v;
    this.done[o] = 1;
    const size = this.done.length;
    for (let q = o + 1; q < size; q++) { this.below[q] = o; if (this.done[q]) break; }
    for (let q = o - 1; q >= 0; q--) { this.above[q] = o; if (this.done[q]) break; }
    return v;
  }
  /** Whether mean > bound(count), exactly as a comparison with the exact bound would answer. */
  exceeds(count: number, mean: number): boolean {
    const o = count - this.kMin;
    if (!this.done[o]) {
      const a = this.below[o];
      const b = this.above[o];
      if (a >= 0 && b >= 0) {
        if (mean <= ((this.value[a] * (a + this.kMin)) / count) * (1 - BRACKET_MARGIN)) return false;
        if (mean > ((this.value[b] * (b + this.kMin)) / count) * (1 + BRACKET_MARGIN)) return true;
      }
    }
    return mean > this.exact(count);
  }
  /** Whether mean < bound(count), exactly as a comparison with the exact bound would answer. */
  under(count: number, mean: number): boolean {
    const o = count - this.kMin;
    if (!this.done[o]) {
      const a = this.below[o];
      const b = this.above[o];
      if (a >= 0 && b >= 0) {
        if (mean >= ((this.value[b] * (b + this.kMin)) / count) * (1 + BRACKET_MARGIN)) return false;
        if (mean < ((this.value[a] * (a + this.kMin)) / count) * (1 - BRACKET_MARGIN)) return true;
      }
    }
    return mean < this.exact(count);
  }
}

/**
 * The trailing window of each update in turn (`advance(i)` for i = 0, 1, ... n-1): it starts at `start` and holds
 * `spec.size` updates or `spec.size` seconds; it never reaches back past a filter restart (`breaks`, the first update
 * of each later segment), and it is full once its segment has run for the whole window. Shared by the sliding average
 * with columns and the inside-share walk, so both walk the windows exactly alike.
 */
class TrailingWindows {
  /** First update of the current window. */
  start = 0;
  private segmentStart = 0;
  private nextBreak = 0;
  private t0: number;
  private readonly byUpdates: boolean;
  private readonly size: number;

  constructor(private readonly t_s: Float64Array, private readonly n: number, spec: WindowSpec, private readonly breaks: readonly number[]) {
    this.t0 = firstFinite(t_s, n);
    this.byUpdates = spec.kind === 'updates';
    this.size = spec.size;
  }

  /** Move to update `i` (the next one); whether its window is full. */
  advance(i: number): boolean {
    const t = this.t_s;
    if (this.nextBreak < this.breaks.length && i === this.breaks[this.nextBreak]) {
      this.segmentStart = i;
      this.start = i;
      this.t0 = firstFinite(t.subarray(i), this.n - i);
      this.nextBreak++;
    }
    if (this.byUpdates) {
      this.start = Math.max(this.segmentStart, i - this.size + 1);
      return i - this.segmentStart + 1 >= this.size;
    }
    const from = t[i] - this.size;
    let j = this.start;
    while (j < i && t[j] <= from) j++;
    this.start = j;
    return t[i] - this.t0 >= this.size;
  }
}

/** The first finite value of `t[0..n)`, NaN when there is none. */
function firstFinite(t: Float64Array, n: number): number {
  for (let i = 0; i < n; i++) if (Number.isFinite(t[i])) return t[i];
  return NaN;
}

/** Prefix sums P[i] = sum of values[0..i). */
export function prefixSums(values: Float64Array, n: number): Float64Array {
  return prefixSumsInto(values, n, new Float64Array(n + 1));
}

/** {@link prefixSums} written into `out` (at least n + 1 values, e.g. a scratch column); returns `out`. */
export function prefixSumsInto(values: Float64Array, n: number, out: Float64Array): Float64Array {
  out[0] = 0;
  for (let i = 0; i < n; i++) out[i + 1] = out[i] + values[i];
  return out;
}

/**
 * Sliding average of `nis[0..n)` (accepted updates, finite) at times `t_s`, with bands at `confidence` for the
 * panel and the share of full windows inside the 95% bounds.
 * @param breaks first update of each later segment (windows never straddle a filter restart)
 * @param withColumns false: only `full` and `fullInside95` (the per-update columns come back empty), for a caller
 *   that makes the panel's columns later, if at all
 */
export function slidingAverage(
  t_s: Float64Array, nis: Float64Array, n: number, dof: number, spec: WindowSpec, confidence: number,
  prefix = prefixSums(nis, n), breaks: readonly number[] = [], withColumns = true,
): SlidingAverage {
  if (!withColumns) return insideShareFromPrefix(t_s, n, dof, spec, prefix, breaks);
  const size_ = n;
  const mean = new Float64Array(size_);
  const count = new Float64Array(size_);
  const lo = new Float64Array(size_).fill(NaN);
  const hi = new Float64Array(size_).fill(NaN);
  const band = new BoundsCache(confidence, dof);
  const band95 = confidence === 0.95 ? band : new BoundsCache(0.95, dof);
  let full = 0;
  let fullInside95 = 0;
  const walk = new TrailingWindows(t_s, n, spec, breaks);
  for (let i = 0; i < n; i++) {
    const isFull = walk.advance(i);
    const j = walk.start;
    const k = i - j + 1;
    const m = (prefix[i + 1] - prefix[j]) / k;
    if (withColumns) {
      mean[i] = m;
      count[i] = k;
    }
    // Bands only for full windows: the short windows at the start would each need their own quantiles.
    if (isFull) {
      if (withColumns) {
        band.ensure(k);
        lo[i] = band.lower(k);
        hi[i] = band.upper(k);
      }
      full++;
      band95.ensure(k); // a no-op when the band above is the 95% one and was just filled
      if (m >= band95.lower(k) && m <= band95.upper(k)) fullInside95++;
    }
  }
  return { mean, count, lo, hi, full, fullInside95 };
}

/**
 * {@link slidingAverage} without the per-update columns (`withColumns` false): `full` and `fullInside95` only, from
 * the prefix sums of the NIS (all it reads of them; the per-update columns come back empty). The windows are walked
 * exactly as there, and the inside-95% decision is taken with bracketed bounds (BracketedBound) between the smallest
 * and largest count of a full window.
 */
export function insideShareFromPrefix(
  t_s: Float64Array, n: number, dof: number, spec: WindowSpec, prefix: Float64Array, breaks: readonly number[] = [],
): SlidingAverage {
  // Two walks over the windows: the first finds the smallest and largest count of a full window (the brackets'
  // ends), the second decides each window. Walking twice costs less than keeping every window's count and average
  // in work columns (first touches of new memory cost ~3.5 ms per MB here).
  let full = 0;
  let kMin = Infinity;
  let kMax = 0;
  let fullInside95 = 0;
  let lo95: BracketedBound | undefined;
  let hi95: BracketedBound | undefined;
  let finite = true;
  for (let pass = 0; pass < 2; pass++) {
    if (pass === 1) {
      if (full === 0) break;
      lo95 = new BracketedBound(chi2IntervalLower, 0.95, dof, kMin, kMax);
      hi95 = new BracketedBound(chi2IntervalUpper, 0.95, dof, kMin, kMax);
      finite = [lo95.exact(kMin), lo95.exact(kMax), hi95.exact(kMin), hi95.exact(kMax)].every(Number.isFinite);
    }
    const walk = new TrailingWindows(t_s, n, spec, breaks);
    for (let i = 0; i < n; i++) {
      const isFull = walk.advance(i);
      const j = walk.start;
      if (!isFull) continue;
      const k = i - j + 1;
      if (pass === 0 || !lo95 || !hi95) {
        full++;
        if (k < kMin) kMin = k;
        if (k > kMax) kMax = k;
        continue;
      }
      const m = (prefix[i + 1] - prefix[j]) / k;
      // Inside is m >= lower && m <= upper, as slidingAverage compares; for a mean that is not NaN and finite
      // bounds (always, for a positive dof) that is neither under the lower nor above the upper bound.
      if (!finite) {
        if (m >= lo95.exact(k) && m <= hi95.exact(k)) fullInside95++;
      } else if (!Number.isNaN(m) && !hi95.exceeds(k, m) && !lo95.under(k, m)) {
        fullInside95++;
      }
    }
  }
  return { mean: new Float64Array(0), count: new Float64Array(0), lo: new Float64Array(0), hi: new Float64Array(0), full, fullInside95 };
}

/**
 * The corrected `inconsistent` test over half-overlapping windows (see the file comment): at most `familyAlpha`
 * probability of any finding for a consistent channel.
 * @param timesSorted the caller knows `t_s[0..n)` is non-decreasing without NaN (windows are then placed by bisection;
 *   the same windows)
 */
export function windowTest(
  t_s: Float64Array, nis: Float64Array, n: number, dof: number, spec: WindowSpec, familyAlpha: number,
  prefix = prefixSums(nis, n), breaks: readonly number[] = [], timesSorted = false,
): WindowTest {
  return windowTestFromPrefix(t_s, n, dof, spec, familyAlpha, prefix, breaks, timesSorted);
}

/**
 * {@link windowTest} from the prefix sums of the NIS (all it reads of them), for a caller that keeps no NIS column.
 */
export function windowTestFromPrefix(
  t_s: Float64Array, n: number, dof: number, spec: WindowSpec, familyAlpha: number,
  prefix: Float64Array, breaks: readonly number[] = [], timesSorted = false,
): WindowTest {
  // Pass 1: the windows of every segment (depends on the times only, so M is fixed before any NIS is looked at).
  const starts: number[] = [];
  const ends: number[] = [];
  const cuts = [0, ...breaks.filter((b) => b > 0 && b < n), n];
  for (let c = 0; c + 1 < cuts.length; c++) {
    if (cuts[c + 1] > cuts[c]) placeWindows(t_s, cuts[c], cuts[c + 1], spec, starts, ends, timesSorted);
  }
  const tests = starts.length;
  const alphaPerTest = tests > 0 ? familyAlpha / tests : familyAlpha;
  let kMin = Infinity;
  let kMax = 0;
  for (let wi = 0; wi < tests; wi++) {
    const k = ends[wi] - starts[wi];
    if (k < kMin) kMin = k;
    if (k > kMax) kMax = k;
  }
  // Each end of the bounds is computed only for the counts whose decision needs it (BracketedBound), e.g. only
  // the upper end for a window above its bounds; comparisons are those of the exact bounds.
  const lower = tests > 0 ? new BracketedBound(chi2IntervalLower, 1 - alphaPerTest, dof, kMin, kMax) : undefined;
  const upper = tests > 0 ? new BracketedBound(chi2IntervalUpper, 1 - alphaPerTest, dof, kMin, kMax) : undefined;
  const runs: InconsistentRun[] = [];
  let open: InconsistentRun | undefined;
  for (let wi = 0; wi < tests && lower && upper; wi++) {
    const a = starts[wi];
    const b = ends[wi];
    const k = b - a;
    const m = (prefix[b] - prefix[a]) / k;
    // m > hi ? overconfident : m < lo ? pessimistic : not flagged
    const side = upper.exceeds(k, m) ? 'overconfident' : lower.under(k, m) ? 'pessimistic' : undefined;
    if (!side) { open = undefined; continue; }
    const bound = side === 'overconfident' ? upper.exact(k) : lower.exact(k);
    if (open && open.side === side) {
      open.last = b - 1;
      open.windows++;
      // Keep the window furthest beyond its own bound (ratio to the bound, as counts differ between windows).
      const further = side === 'overconfident' ? m / bound > open.mean / open.bound : m * open.bound < open.mean * bound;
      if (further) { open.mean = m; open.count = k; open.bound = bound; }
    } else {
      open = { side, first: a, last: b - 1, mean: m, count: k, bound, p: NaN, windows: 1 };
      runs.push(open);
    }
  }
  for (const r of runs) {
    r.p = r.side === 'overconfident' ? chi2Sf(r.mean * r.count, dof * r.count) : chi2Cdf(r.mean * r.count, dof * r.count);
  }
  return { tests, alphaPerTest, runs };
}

/**
 * The first index in [from, n) whose time is at least x (n when none), for non-decreasing times without NaN: the
 * index the linear scan `while (i < n && !(t[i] >= x)) i++` stops at, found by galloping and bisection (the scan
 * walked every update twice per half window).
 */
function firstAtLeast(t: Float64Array, from: number, n: number, x: number): number {
  if (Number.isNaN(x)) return n; // nothing is >= NaN: the scan runs to the end
  if (from >= n || t[from] >= x) return from;
  // t[lo] < x; find hi with t[hi] >= x (or n)
  let lo = from;
  let step = 1;
  let hi = from + 1;
  while (hi < n && t[hi] < x) {
    lo = hi;
    step *= 2;
    hi = lo + step;
  }
  if (hi > n) hi = n;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (t[mid] >= x) hi = mid;
    else lo = mid;
  }
  return hi;
}

/** Pass 1 of {@link windowTest} for updates [a0, a1): half-overlapping windows from the range's start. */
function placeWindows(
  t_s: Float64Array, a0: number, a1: number, spec: WindowSpec, starts: number[], ends: number[], sorted: boolean,
): void {
  const n = a1;
  if (spec.kind === 'updates') {
    const k = Math.max(1, Math.floor(spec.size));
    const stride = Math.max(1, Math.ceil(k / 2));
    for (let a = a0; a < n; a += stride) {
      starts.push(a);
      ends.push(Math.min(n, a + k));
      if (a + k >= n) break;
    }
    return;
  }
  const w = spec.size;
  const h = w / 2;
  const t0 = firstFinite(t_s.subarray(a0, a1), a1 - a0);
  let a = a0;
  let b = a0;
  let k = 0;
  // Each update lies in at most three windows and empty stretches are jumped over, so there are at most 3n
  // windows; the cap only stops a window so small against the time stamps that t0 + k h stops moving.
  for (let guard = 0; Number.isFinite(t0) && guard < 4 * (a1 - a0) + 16; guard++) {
    const s = t0 + k * h;
    // `!(t >= s)` also steps over NaN times, which no window can place.
    if (sorted) a = firstAtLeast(t_s, a, n, s);
    else while (a < n && !(t_s[a] >= s)) a++;
    if (a >= n) break;
    if (b < a) b = a;
    if (sorted) b = firstAtLeast(t_s, b, n, s + w);
    else while (b < n && !(t_s[b] >= s + w)) b++;
    if (b > a) {
      starts.push(a);
      ends.push(b);
      if (b >= n) break;
      k++;
    } else {
      // Empty window (a gap in the log): jump to the first window that contains update a.
      const next = Math.floor((t_s[a] - w - t0) / h) + 1;
      if (!Number.isFinite(next)) break; // an infinite time stamp: nothing after it can be placed
      k = Math.max(k + 1, next);
    }
  }
}

/**
 * Min/max envelope of a series over a window, one bucket per pixel column, so that a plot of a million points stays
 * smooth and a single spike is never hidden (the same rule as uPlot's own decimation in src/paths/linear.js: one min
 * and one max per pixel column).
 *
 * Conventions: `x` ascending (non-decreasing); `y`, `lo`, `hi` aligned with `x`; NaN in `y` is a gap. The window
 * [t0, t1] is in x units; buckets split it into `buckets` equal spans. Each bucket contributes the point of its
 * smallest and of its largest finite `y`, in their time order (one point when they coincide), so a line through the
 * output passes through every extreme. A bucket holding only NaN contributes one NaN point (the gap stays a gap).
 * The band is widened conservatively: each output point carries the bucket's smallest `lo` and largest `hi`.
 * One point on each side just outside the window is kept so lines run to the plot's edges.
 *
 * Cost: two binary searches for the window plus one pass over the points inside it, O(points in window), i.e.
 * O(points per bucket) per bucket; nothing is copied when the window holds few enough points to send as they are.
 */

/** The columns an envelope is taken from (a `Series` fits). */
export interface EnvelopeSource {
  x: Float64Array;
  y: Float64Array;
  lo?: Float64Array;
  hi?: Float64Array;
  line?: Float64Array;
}

/** An envelope: equal-length columns, ascending x. */
export interface Envelope {
  x: Float64Array;
  y: Float64Array;
  lo?: Float64Array;
  hi?: Float64Array;
  line?: Float64Array;
  /** Points of the source inside [t0, t1]. */
  inWindow: number;
  /** True when buckets were formed (false: the points were copied as they are). */
  decimated: boolean;
}

/** First index i in [lo, hi) with x[i] >= value (hi when none); x ascending. */
export function lowerBound(x: Float64Array, value: number, lo = 0, hi = x.length): number {
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (x[mid] < value) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** First index i in [lo, hi) with x[i] > value (hi when none); x ascending. */
export function upperBound(x: Float64Array, value: number, lo = 0, hi = x.length): number {
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (x[mid] <= value) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** True when x is non-decreasing over its finite values and holds no NaN (so binary search applies). */
export function isAscending(x: Float64Array, length = x.length): boolean {
  for (let i = 0; i < length; i++) {
    if (Number.isNaN(x[i])) return false;
    if (i > 0 && x[i] < x[i - 1]) return false;
  }
  return true;
}

/**
 * Min/max envelope of `source` over [t0, t1] with `buckets` buckets (see the file header). When the window holds at
 * most `2 * buckets` points they are returned as they are (copied), with `decimated` false.
 * `length` limits the source to its first `length` points (streams may hold spare capacity).
 */
export function envelope(source: EnvelopeSource, t0: number, t1: number, buckets: number, length = source.x.length): Envelope {
  const n = Math.min(length, source.x.length, source.y.length);
  const acc = new BucketScan(source.y, source.lo, source.hi);
  return bucketEnvelope(source, n, t0, t1, buckets, (from, to) => {
    acc.reset();
    acc.scan(from, to);
    return acc;
  });
}

/** What a bucket's summary gives: first index of the smallest and of the largest `y` (-1: none), band extremes (+-Infinity: none). */
export interface BucketSummary {
  readonly iMin: number;
  readonly iMax: number;
  readonly lo: number;
  readonly hi: number;
}

/** Running min/max over pieces of a series visited left to right (strict comparisons: the first index wins a tie). */
export class BucketScan implements BucketSummary {
  iMin = -1;
  iMax = -1;
  yMin = Infinity;
  yMax = -Infinity;
  lo = Infinity;
  hi = -Infinity;

  constructor(protected readonly y: Float64Array, protected readonly loCol?: Float64Array, protected readonly hiCol?: Float64Array) {}

  /** Forget what was summed (a new bucket). */
  reset(): void {
    this.iMin = -1;
    this.iMax = -1;
    this.yMin = Infinity;
    this.yMax = -Infinity;
    this.lo = Infinity;
    this.hi = -Infinity;
  }

  /** Points [from, to) one by one (locals in the loop: V8 keeps them in registers, not in the object). */
  scan(from: number, to: number): void {
    if (to <= from) return;
    const { y, loCol, hiCol } = this;
    let yMin = this.yMin;
    let yMax = this.yMax;
    let iMin = this.iMin;
    let iMax = this.iMax;
    for (let k = from; k < to; k++) {
      const v = y[k];
      if (v < yMin) { yMin = v; iMin = k; }
      if (v > yMax) { yMax = v; iMax = k; }
    }
    this.yMin = yMin;
    this.yMax = yMax;
    this.iMin = iMin;
    this.iMax = iMax;
    if (loCol) {
      let lo = this.lo;
      for (let k = from; k < to; k++) if (loCol[k] < lo) lo = loCol[k];
      this.lo = lo;
    }
    if (hiCol) {
      let hi = this.hi;
      for (let k = from; k < to; k++) if (hiCol[k] > hi) hi = hiCol[k];
      this.hi = hi;
    }
  }
}

/**
 * The envelope of `source`'s first `n` points over [t0, t1] (see the file header) with each bucket's extremes from
 * `summarise(from, to)`: the plain scan ({@link envelope}) and the pyramid (core/envelopeIndex.ts) share this frame,
 * so they place buckets, edge points and gap points the same way.
 */
export function bucketEnvelope(source: EnvelopeSource, n: number, t0: number, t1: number, buckets: number,
  summarise: (from: number, to: number) => BucketSummary): Envelope {
  const { x } = source;
  const nb = Math.max(1, Math.floor(buckets));
  const i0 = lowerBound(x, t0, 0, n);
  const i1 = upperBound(x, t1, i0, n);
  const inWindow = i1 - i0;
  // One neighbour outside each side, so lines reach the plot's edges.
  const from = i0 > 0 ? i0 - 1 : i0;
  const to = i1 < n ? i1 + 1 : i1;
  if (inWindow <= 2 * nb || !(t1 > t0)) return copyRange(source, from, to, inWindow);

  const cap = 2 * nb + 2;
  const idx = new Int32Array(cap);
  const bandLo = new Float64Array(cap);
  const bandHi = new Float64Array(cap);
  let count = 0;
  const push = (i: number, l: number, h: number): void => {
    idx[count] = i;
    bandLo[count] = l;
    bandHi[count] = h;
    count++;
  };
  if (from < i0) push(from, source.lo ? source.lo[from] : NaN, source.hi ? source.hi[from] : NaN);

  const span = (t1 - t0) / nb;
  let i = i0;
  for (let b = 0; b < nb && i < i1; b++) {
    const end = b === nb - 1 ? i1 : lowerBound(x, t0 + (b + 1) * span, i, i1);
    if (end <= i) continue;
    const { iMin, iMax, lo: l, hi: h } = summarise(i, end);
    const lo = l === Infinity ? NaN : l;
    const hi = h === -Infinity ? NaN : h;
    if (iMin < 0) push(i, lo, hi); // only NaN in this bucket: keep one gap point
    else if (iMin === iMax) push(iMin, lo, hi);
    else if (iMin < iMax) { push(iMin, lo, hi); push(iMax, lo, hi); }
    else { push(iMax, lo, hi); push(iMin, lo, hi); }
    i = end;
  }
  if (to > i1) push(i1, source.lo ? source.lo[i1] : NaN, source.hi ? source.hi[i1] : NaN);

  const out: Envelope = { x: new Float64Array(count), y: new Float64Array(count), inWindow, decimated: true };
  if (source.lo) out.lo = bandLo.slice(0, count);
  if (source.hi) out.hi = bandHi.slice(0, count);
  if (source.line) out.line = new Float64Array(count);
  for (let k = 0; k < count; k++) {
    const j = idx[k];
    out.x[k] = x[j];
    out.y[k] = source.y[j];
    if (out.line && source.line) out.line[k] = source.line[j];
  }
  return out;
}

/** Every `step`-th point of a series whose x is not ordered (an xy path), plus the last; at most `maxPoints`. */
export function stride(source: EnvelopeSource, maxPoints: number, length = source.x.length): Envelope {
  const n = Math.min(length, source.x.length, source.y.length);
  const step = Math.max(1, Math.ceil(n / Math.max(1, maxPoints)));
  if (step === 1) return copyRange(source, 0, n, n);
  const count = Math.ceil(n / step) + ((n - 1) % step === 0 ? 0 : 1);
  const pick = (a: Float64Array): Float64Array => {
    const out = new Float64Array(count);
    let k = 0;
    for (let i = 0; i < n; i += step) out[k++] = a[i];
    if (k < count) out[k] = a[n - 1];
    return out;
  };
  const out: Envelope = { x: pick(source.x), y: pick(source.y), inWindow: n, decimated: true };
  if (source.lo) out.lo = pick(source.lo);
  if (source.hi) out.hi = pick(source.hi);
  if (source.line) out.line = pick(source.line);
  return out;
}

function copyRange(source: EnvelopeSource, from: number, to: number, inWindow: number): Envelope {
  const out: Envelope = { x: source.x.slice(from, to), y: source.y.slice(from, to), inWindow, decimated: false };
  if (source.lo) out.lo = source.lo.slice(from, to);
  if (source.hi) out.hi = source.hi.slice(from, to);
  if (source.line) out.line = source.line.slice(from, to);
  return out;
}

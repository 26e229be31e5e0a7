/**
 * A min/max pyramid over one series, so that the envelope of a window (core/envelope.ts) costs O(buckets * levels)
 * instead of O(points in the window): a zoom or pan on a million-epoch log touches a few thousand entries, not
 * half a million points.
 *
 * Conventions: the same as core/envelope.ts (x ascending, NaN in `y` is a gap, `lo`/`hi` aligned with `x`). Level 0
 * holds one entry per block of {@link BLOCK} points; each higher level holds one entry per {@link FANOUT} entries of
 * the level below. An entry keeps the index of the FIRST smallest and of the FIRST largest `y` of its points (-1
 * when none qualifies), the smallest `lo` and the largest `hi` (NaN when none). A range is summed left to right
 * (partial block, blocks climbing, blocks descending, partial block), so ties resolve to the first index exactly as
 * the plain scan of {@link envelope} does, and {@link envelopeIndexed} returns the same points as it.
 *
 * Memory: about (4 + 4 + 8 + 8) * n / BLOCK * 4/3 bytes per series (0.5 MB for a million points with a band).
 * Hand-written: no npm package offers a first-index min/max pyramid over Float64Array columns with a band.
 */
import { lowerBound, upperBound, type Envelope, type EnvelopeSource } from './envelope';

/** Points per level-0 block. */
const BLOCK = 64;
/** Entries of a level per entry of the level above. */
const FANOUT = 4;

interface Level {
  /** Points covered by one entry. */
  size: number;
  iMin: Int32Array;
  iMax: Int32Array;
  lo?: Float64Array;
  hi?: Float64Array;
}

/** The pyramid of one series' first `length` points (build it with {@link buildEnvelopeIndex}). */
export interface EnvelopeIndex {
  /** Points indexed. */
  readonly length: number;
  readonly levels: readonly Level[];
}

/** Running min/max over pieces visited left to right (strict comparisons: the first index wins a tie). */
class Accumulator {
  iMin = -1;
  iMax = -1;
  yMin = Infinity;
  yMax = -Infinity;
  lo = Infinity;
  hi = -Infinity;

  constructor(private readonly y: Float64Array, private readonly loCol?: Float64Array, private readonly hiCol?: Float64Array) {}

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

  /** Entry `j` of `level`. */
  add(level: Level, j: number): void {
    const a = level.iMin[j];
    if (a >= 0 && this.y[a] < this.yMin) { this.yMin = this.y[a]; this.iMin = a; }
    const b = level.iMax[j];
    if (b >= 0 && this.y[b] > this.yMax) { this.yMax = this.y[b]; this.iMax = b; }
    if (level.lo && level.lo[j] < this.lo) this.lo = level.lo[j];
    if (level.hi && level.hi[j] > this.hi) this.hi = level.hi[j];
  }
}

/** Build the pyramid of `source`'s first `length` points: O(length) time, once per series. */
export function buildEnvelopeIndex(source: EnvelopeSource, length = source.x.length): EnvelopeIndex {
  const n = Math.max(0, Math.min(length, source.x.length, source.y.length));
  const levels: Level[] = [];
  const acc = new Accumulator(source.y, source.lo, source.hi);
  const blocks = Math.ceil(n / BLOCK);
  const base = newLevel(BLOCK, blocks, source.lo !== undefined, source.hi !== undefined);
  for (let j = 0; j < blocks; j++) {
    acc.reset();
    acc.scan(j * BLOCK, Math.min(n, (j + 1) * BLOCK));
    store(base, j, acc);
  }
  levels.push(base);
  let below = base;
  while (below.iMin.length > 1) {
    const count = Math.ceil(below.iMin.length / FANOUT);
    const level = newLevel(below.size * FANOUT, count, below.lo !== undefined, below.hi !== undefined);
    for (let j = 0; j < count; j++) {
      acc.reset();
      const end = Math.min(below.iMin.length, (j + 1) * FANOUT);
      for (let c = j * FANOUT; c < end; c++) acc.add(below, c);
      store(level, j, acc);
    }
    levels.push(level);
    below = level;
  }
  return { length: n, levels };
}

function newLevel(size: number, count: number, lo: boolean, hi: boolean): Level {
  const level: Level = { size, iMin: new Int32Array(count), iMax: new Int32Array(count) };
  if (lo) level.lo = new Float64Array(count);
  if (hi) level.hi = new Float64Array(count);
  return level;
}

function store(level: Level, j: number, acc: Accumulator): void {
  level.iMin[j] = acc.iMin;
  level.iMax[j] = acc.iMax;
  if (level.lo) level.lo[j] = acc.lo === Infinity ? NaN : acc.lo;
  if (level.hi) level.hi[j] = acc.hi === -Infinity ? NaN : acc.hi;
}

/** Sum the points [a, b) into `acc`, left to right, with the largest aligned pyramid entries that fit. */
function summarise(index: EnvelopeIndex, acc: Accumulator, a: number, b: number): void {
  const { levels } = index;
  let p = a;
  const head = Math.min(b, Math.ceil(p / BLOCK) * BLOCK);
  acc.scan(p, head);
  p = head;
  if (p >= b || levels.length === 0) return;
  // Climb: at level l, p is a multiple of levels[l].size; take entries until p is aligned to the next level.
  let l = 0;
  for (;;) {
    const size = levels[l].size;
    if (p + size > b) break;
    const next = l + 1 < levels.length ? levels[l + 1].size : 0;
    if (next && p % next === 0) {
      l++;
      continue;
    }
    acc.add(levels[l], p / size);
    p += size;
  }
  // Descend: the largest entries that still fit, down to level 0.
  for (; l >= 0; l--) {
    const size = levels[l].size;
    while (p + size <= b) {
      acc.add(levels[l], p / size);
      p += size;
    }
  }
  acc.scan(p, b);
}

/**
 * The same envelope as {@link envelope} (same points, same order, same band), read from `index` (built over the
 * same `source` and `length`): two binary searches per bucket and O(levels * FANOUT + BLOCK) work per bucket.
 */
export function envelopeIndexed(source: EnvelopeSource, index: EnvelopeIndex, t0: number, t1: number, buckets: number): Envelope {
  const { x } = source;
  const n = index.length;
  const nb = Math.max(1, Math.floor(buckets));
  const i0 = lowerBound(x, t0, 0, n);
  const i1 = upperBound(x, t1, i0, n);
  const inWindow = i1 - i0;
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

  const acc = new Accumulator(source.y, source.lo, source.hi);
  const span = (t1 - t0) / nb;
  let i = i0;
  for (let b = 0; b < nb && i < i1; b++) {
    const end = b === nb - 1 ? i1 : lowerBound(x, t0 + (b + 1) * span, i, i1);
    if (end <= i) continue;
    acc.reset();
    summarise(index, acc, i, end);
    const lo = acc.lo === Infinity ? NaN : acc.lo;
    const hi = acc.hi === -Infinity ? NaN : acc.hi;
    const { iMin, iMax } = acc;
    if (iMin < 0) push(i, lo, hi);
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

function copyRange(source: EnvelopeSource, from: number, to: number, inWindow: number): Envelope {
  const out: Envelope = { x: source.x.slice(from, to), y: source.y.slice(from, to), inWindow, decimated: false };
  if (source.lo) out.lo = source.lo.slice(from, to);
  if (source.hi) out.hi = source.hi.slice(from, to);
  if (source.line) out.line = source.line.slice(from, to);
  return out;
}

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
import { BucketScan, bucketEnvelope, type Envelope, type EnvelopeSource } from './envelope';

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
class Accumulator extends BucketScan {
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
  const acc = new Accumulator(source.y, source.lo, source.hi);
  return bucketEnvelope(source, index.length, t0, t1, buckets, (from, to) => {
    acc.reset();
    summarise(index, acc, from, to);
    return acc;
  });
}

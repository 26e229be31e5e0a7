/**
 * Work columns shared by the analysis stages of one run. Fresh memory is the largest cost of the stages on a long
 * log (the first write to every new page is far slower than the arithmetic done on it), and the stages run one
 * after another, so the work columns one stage has finished with serve the next one instead of new ones.
 *
 * Rules: a column taken is the caller's until it gives it back; its length is AT LEAST the one asked for and its
 * contents are arbitrary (write before reading). Never give back a column that something still reads (a series,
 * a report, a closure). The pipeline (analyze.ts) empties the pool when a run is done, so nothing is kept between
 * runs.
 */

import { newFloat64, newInt32 } from './columnAlloc';

const float64: Float64Array[] = [];
const int32: Int32Array[] = [];

/** A Float64Array work column of at least `n` values (reused when one is free), contents arbitrary. */
export function takeFloat64(n: number): Float64Array {
  return take(float64, n) ?? newFloat64(n);
}

/** An Int32Array work column of at least `n` values (reused when one is free), contents arbitrary. */
export function takeInt32(n: number): Int32Array {
  return take(int32, n) ?? newInt32(n);
}

/**
 * Make sure the pool holds at least `float64` free Float64Array and `int32` free Int32Array columns of at least `n`
 * values, allocating the missing ones as views of ONE new buffer: a 2 MB column alone is too small for the kernel's
 * huge pages and costs ~500 page faults on first touch (~6 ms), a few of them together in one buffer do not.
 * Call it at the start of a stage with the most columns of each kind it holds at once.
 */
export function reserveScratch(n: number, float64Count: number, int32Count = 0): void {
  const len = Math.max(0, Math.floor(n));
  if (len === 0) return;
  const f = Math.max(0, float64Count - float64.filter((c) => c.length >= len).length);
  const i = Math.max(0, int32Count - int32.filter((c) => c.length >= len).length);
  if (f + i === 0) return;
  const buffer = new ArrayBuffer(8 * len * f + 4 * len * i);
  for (let j = 0; j < f; j++) float64.push(new Float64Array(buffer, 8 * len * j, len));
  for (let j = 0; j < i; j++) int32.push(new Int32Array(buffer, 8 * len * f + 4 * len * j, len));
}

/** Give work columns back for the next stage (they must not be read or written by the caller afterwards). */
export function giveBack(...columns: (Float64Array | Int32Array | undefined)[]): void {
  for (const c of columns) {
    if (c instanceof Float64Array) float64.push(c);
    else if (c instanceof Int32Array) int32.push(c);
  }
}

/** Drop every pooled column (the end of a run). */
export function emptyScratch(): void {
  float64.length = 0;
  int32.length = 0;
}

/** The smallest free column of at least n values, removed from the pool; undefined when none fits. */
function take<T extends Float64Array | Int32Array>(pool: T[], n: number): T | undefined {
  let best = -1;
  for (let i = 0; i < pool.length; i++) {
    if (pool[i].length >= n && (best < 0 || pool[i].length < pool[best].length)) best = i;
  }
  if (best < 0) return undefined;
  const [c] = pool.splice(best, 1);
  return c;
}

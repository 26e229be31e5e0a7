/**
 * New zero-filled columns for the analysis stages, carved from large slabs.
 *
 * Why by hand: the cost of a new column on a long log is not the arithmetic but the first write to each of its pages.
 * The command-line tool asks glibc for transparent huge pages (extension/cli/launch.ts), which makes those first
 * writes about 30 times cheaper, but only inside blocks large enough to hold aligned 2 MiB pages: a 2 MB column of
 * its own (250,000 values) gets none. Columns of a run are therefore cut from 32 MiB slabs, bump-allocated and never
 * reused, so every column starts zeroed like `new Float64Array(n)`. Columns too small to matter, or big enough to
 * get huge pages on their own, get their own buffer. No JavaScript library does this (typed-array pools hand out
 * reused, dirty memory; that is scratch.ts's job, for work columns a stage gives back).
 *
 * A slab lives as long as any column cut from it. `releaseSlab()` drops the module's hold on the current slab at the
 * end of a run, so a long-lived worker keeps only what its results still reference.
 * A column shares its ArrayBuffer with others: never transfer `column.buffer` to another thread without copying
 * (see extension/host/analysisWorker.ts `detachSeries`, which copies views that cover little of their buffer).
 */

/** Bytes per slab. */
const SLAB_BYTES = 32 * 1024 * 1024;
/** Columns below this many bytes get their own buffer (their pages are few; a slab would only add sharing). */
const MIN_SLAB_COLUMN_BYTES = 64 * 1024;
/** Columns above this many bytes get their own buffer, large enough for huge pages by itself. */
const MAX_SLAB_COLUMN_BYTES = SLAB_BYTES / 4;
/** Alignment of each column in a slab, bytes (a cache line). */
const ALIGN_BYTES = 64;

let slab: ArrayBuffer | undefined;
let used = 0;

/** A zero-filled Float64Array of `n` values (like `new Float64Array(n)`), cut from a slab when that helps. */
export function newFloat64(n: number): Float64Array {
  const offset = place(n * 8);
  return offset < 0 ? new Float64Array(n) : new Float64Array(slab as ArrayBuffer, offset, n);
}

/** A zero-filled Int32Array of `n` values (like `new Int32Array(n)`), cut from a slab when that helps. */
export function newInt32(n: number): Int32Array {
  const offset = place(n * 4);
  return offset < 0 ? new Int32Array(n) : new Int32Array(slab as ArrayBuffer, offset, n);
}

/** Stop cutting from the current slab (its columns stay valid; the slab is freed when they are). */
export function releaseSlab(): void {
  slab = undefined;
  used = 0;
}

/** Byte offset of `bytes` fresh bytes in the current (or a new) slab, or -1 when the column gets its own buffer. */
function place(bytes: number): number {
  if (bytes < MIN_SLAB_COLUMN_BYTES || bytes > MAX_SLAB_COLUMN_BYTES) return -1;
  if (!slab || used + bytes > SLAB_BYTES) {
    slab = new ArrayBuffer(SLAB_BYTES);
    used = 0;
  }
  const offset = used;
  used += Math.ceil(bytes / ALIGN_BYTES) * ALIGN_BYTES;
  return offset;
}

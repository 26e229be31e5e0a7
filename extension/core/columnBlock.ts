/**
 * Many long columns carved from one allocation.
 *
 * Why: fresh memory is paid page by page on first touch, and a column of 250,000 values (just under 2 MiB) is too
 * small for the kernel to back it with huge pages, so each costs ~500 page faults (~6 ms on our VM). One buffer for
 * all the columns a stage keeps is large enough for huge pages (with `glibc.malloc.hugetlb=1`): measured, twelve
 * such columns fell from ~250 ms to ~40 ms of first touches on a loaded machine. The columns are ordinary
 * Float64Arrays of exactly the asked length, zero-filled like `new Float64Array(n)`; they keep the shared buffer
 * alive, so use this only for columns that live and die together (the error columns of one track).
 */

/**
 * A maker of zero-filled Float64Array columns of `length` values, the first `count` of them from one buffer and any
 * further ones allocated alone.
 */
export function columnBlock(length: number, count: number): () => Float64Array {
  const n = Math.max(0, Math.floor(length));
  const slots = n > 0 ? Math.max(0, Math.floor(count)) : 0;
  const buffer = slots > 0 ? new ArrayBuffer(8 * n * slots) : undefined;
  let used = 0;
  return () => (buffer && used < slots ? new Float64Array(buffer, 8 * n * used++, n) : new Float64Array(n));
}

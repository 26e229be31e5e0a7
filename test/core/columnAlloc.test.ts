/**
 * The slab allocator of the stages' new columns (extension/core/columnAlloc.ts): every column is zeroed, has its
 * own bytes (no two overlap), and small or very large columns get buffers of their own.
 * Zero-filled new typed arrays: ECMAScript 2022, sec. 23.2.5.1 (TypedArray constructor), the behaviour matched here.
 */
import { describe, expect, it } from 'vitest';
import { newFloat64, newInt32, releaseSlab } from '../../extension/core/columnAlloc';

/** Whether two columns share one buffer (compared by identity: a failed toBe would print 32 MB buffers). */
const same = (a: ArrayBufferView, b: ArrayBufferView): boolean => a.buffer === b.buffer;

describe('columnAlloc', () => {
  it('cuts mid-sized columns from one slab, zeroed and not overlapping', () => {
    releaseSlab();
    const cols = [newFloat64(250_000), newInt32(100_000), newFloat64(250_000), newFloat64(123_457)];
    expect(same(cols[0], cols[2]) && same(cols[0], cols[1])).toBe(true);
    expect(cols.map((c) => c.length)).toEqual([250_000, 100_000, 250_000, 123_457]);
    for (const c of cols) expect(c.every((v) => v === 0)).toBe(true);
    // Fill each with its own mark; none is overwritten by another.
    cols.forEach((c, k) => c.fill(k + 1));
    cols.forEach((c, k) => expect(c.every((v) => v === k + 1)).toBe(true));
    const spans = cols.map((c) => [c.byteOffset, c.byteOffset + c.byteLength]).sort((a, b) => a[0] - b[0]);
    for (let i = 1; i < spans.length; i++) expect(spans[i][0]).toBeGreaterThanOrEqual(spans[i - 1][1]);
    for (const [start] of spans) expect(start % 64).toBe(0);
  });

  it('gives small and very large columns their own buffer, and starts a new slab when one is full', () => {
    releaseSlab();
    const small = newFloat64(100);
    expect(small.byteOffset).toBe(0);
    expect(small.buffer.byteLength).toBe(800);
    const big = newFloat64(2_000_000); // 16 MB: huge pages by itself
    expect(big.buffer.byteLength).toBe(16_000_000);
    const first = newFloat64(1_000_000);
    const second = newFloat64(1_000_000);
    const third = newFloat64(1_000_000);
    const fourth = newFloat64(1_000_000);
    const fifth = newFloat64(1_000_000); // 5 x 8 MB > 32 MiB: the fifth opens a second slab
    expect(same(second, first) && same(third, first) && same(fourth, first)).toBe(true);
    expect(same(fifth, first)).toBe(false);
    expect(fifth.every((v) => v === 0)).toBe(true);
  });

  it('after releaseSlab, new columns come from a new slab and the old ones stay valid', () => {
    const a = newFloat64(200_000).fill(7);
    releaseSlab();
    const b = newFloat64(200_000);
    expect(same(a, b)).toBe(false);
    expect(a.every((v) => v === 7)).toBe(true);
    expect(b.every((v) => v === 0)).toBe(true);
  });
});

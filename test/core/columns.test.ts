/**
 * Work columns reserved together (scratch.ts): each column
 * is its own, of the asked length (or more, for scratch), zero-filled where promised, and none overlaps another.
 */
import { afterEach, describe, expect, it } from 'vitest';
import { emptyScratch, giveBack, reserveScratch, takeFloat64, takeInt32 } from '../../extension/core/scratch';

/** Write a distinct value into every element of every column, then check each column still holds only its own. */
function expectDisjoint(columns: (Float64Array | Int32Array)[]): void {
  columns.forEach((c, j) => c.fill(j + 1));
  columns.forEach((c, j) => expect(c.every((v) => v === j + 1)).toBe(true));
}

describe('reserveScratch', () => {
  afterEach(() => emptyScratch());
  it('puts the missing float and index columns in the pool, from one buffer, and takes serve them', () => {
    emptyScratch();
    reserveScratch(500, 3, 2);
    const f = [takeFloat64(500), takeFloat64(400), takeFloat64(500)];
    const i = [takeInt32(500), takeInt32(500)];
    for (const c of [...f, ...i]) expect(c.length).toBeGreaterThanOrEqual(500);
    expect(new Set([...f, ...i].map((c) => c.buffer)).size).toBe(1);
    expectDisjoint([...f, ...i]);
    giveBack(...f, ...i);
  });
  it('adds only what the pool lacks', () => {
    emptyScratch();
    const own = new Float64Array(800);
    giveBack(own);
    reserveScratch(500, 2);
    const a = takeFloat64(500), b = takeFloat64(500);
    // one column was already there (the larger one is taken last: the pool hands out the smallest that fits)
    expect([a, b]).toContain(own);
    expect(a.buffer).not.toBe(b.buffer);
  });
});

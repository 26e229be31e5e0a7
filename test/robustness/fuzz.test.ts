/**
 * A few thousand seeded cases of the reader properties (scripts/fuzz/properties.ts; `npm run fuzz` runs 100,000+).
 * A failure prints the seed, the fast-check path and the shrunk counterexample, so it replays exactly.
 */
import { describe, expect, it } from 'vitest';
import { fuzzTargets } from '../../scripts/fuzz/properties';

const TOTAL = 2500;
const SEED = 20261202;

describe('reader properties (seeded fuzz)', () => {
  const targets = fuzzTargets();
  const weights = targets.reduce((s, t) => s + t.weight, 0);
  it.each(targets.map((t, k) => [t.name, t, k] as const))('%s', async (_name, target, k) => {
    const runs = Math.max(1, Math.round((TOTAL * target.weight) / weights));
    const r = await target.run(runs, SEED + k);
    expect(r.failure).toBeUndefined();
    expect(r.runs).toBe(runs);
  });
});

// Checks of the min/max pyramid (extension/core/envelopeIndex.ts): its envelopes must be the very points of the
// plain scan in extension/core/envelope.ts (itself checked against a brute-force scan in envelope.test.ts), over
// random windows, bucket counts, gaps, ties and bands. The one-min-one-max-per-pixel-column rule is common practice
// (as in uPlot's src/paths/linear.js decimation).
import { describe, expect, it } from 'vitest';
import { envelope, type Envelope, type EnvelopeSource } from '../../extension/core/envelope';
import { buildEnvelopeIndex, envelopeIndexed } from '../../extension/core/envelopeIndex';
import { mulberry32 } from '../helpers/mulberry32';

function plain(e: Envelope): Record<string, unknown> {
  return {
    x: Array.from(e.x),
    y: Array.from(e.y),
    lo: e.lo && Array.from(e.lo),
    hi: e.hi && Array.from(e.hi),
    line: e.line && Array.from(e.line),
    inWindow: e.inWindow,
    decimated: e.decimated,
  };
}

/** A random series: ascending x with repeated times, NaN gaps (single and long runs), ties, rare spikes. */
function randomSeries(seed: number, n: number, band: boolean, levels = 0): EnvelopeSource {
  const rnd = mulberry32(seed);
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  const lo = new Float64Array(n);
  const hi = new Float64Array(n);
  const line = new Float64Array(n);
  let t = 0;
  let gap = 0;
  for (let i = 0; i < n; i++) {
    if (rnd() > 0.1) t += rnd() * 0.01; // about one in ten epochs repeats the previous time
    x[i] = t;
    if (gap === 0 && rnd() < 0.001) gap = Math.floor(rnd() * 500);
    // levels > 0: only that many distinct values, so both the smallest and the largest tie across blocks
    const value = levels > 0 ? Math.floor(rnd() * levels) : rnd() < 0.3 ? Math.round(rnd() * 4) : (rnd() - 0.5) * (rnd() < 0.001 ? 1000 : 1);
    y[i] = gap > 0 || rnd() < 0.01 ? NaN : value;
    if (gap > 0) gap--;
    lo[i] = rnd() < 0.02 ? NaN : -1 - rnd();
    hi[i] = rnd() < 0.02 ? NaN : 1 + rnd();
    line[i] = i + 2;
  }
  return band ? { x, y, lo, hi, line } : { x, y, line };
}

describe('envelope from the min/max pyramid', () => {
  it('gives the same points as the plain scan over random windows and widths', () => {
    for (const [seed, n, band, levels] of [[1, 50_000, true, 0], [2, 20_011, false, 0], [3, 4_097, true, 0], [4, 300, true, 0], [5, 30_000, true, 3], [6, 9_999, false, 2]] as const) {
      const s = randomSeries(seed, n, band, levels);
      const index = buildEnvelopeIndex(s);
      const rnd = mulberry32(seed + 100);
      const xMax = s.x[n - 1];
      for (let q = 0; q < 60; q++) {
        let t0 = rnd() * xMax * 1.1 - 0.05 * xMax;
        let t1 = rnd() * xMax * 1.1 - 0.05 * xMax;
        if (t0 > t1) [t0, t1] = [t1, t0];
        if (q === 0) [t0, t1] = [s.x[0], xMax]; // the whole series
        const buckets = 1 + Math.floor(rnd() * (q % 3 === 0 ? 40 : 2000));
        expect(plain(envelopeIndexed(s, index, t0, t1, buckets)), `seed ${seed} window ${t0}..${t1} buckets ${buckets}`).toEqual(plain(envelope(s, t0, t1, buckets)));
      }
    }
  });

  it('honours a length shorter than the columns (spare capacity)', () => {
    const s = randomSeries(9, 10_000, true);
    const index = buildEnvelopeIndex(s, 7_000);
    expect(index.length).toBe(7_000);
    const t1 = s.x[9_999];
    expect(plain(envelopeIndexed(s, index, 0, t1, 300))).toEqual(plain(envelope(s, 0, t1, 300, 7_000)));
  });

  it('keeps a lone spike and an all-NaN stretch as the scan does (hand-checked)', () => {
    const n = 100_000;
    const x = new Float64Array(n).map((_, i) => i * 0.01);
    const y = new Float64Array(n).map((_, i) => (i >= 20_000 && i < 40_000 ? NaN : 0));
    y[77_777] = 144.2;
    const s = { x, y };
    const env = envelopeIndexed(s, buildEnvelopeIndex(s), 0, x[n - 1], 10);
    expect(Math.max(...Array.from(env.y).filter((v) => !Number.isNaN(v)))).toBe(144.2);
    expect(env.x[Array.from(env.y).indexOf(144.2)]).toBeCloseTo(777.77, 9);
    // Buckets 2 and 3 (20 000..39 999) hold only NaN: one gap point each.
    expect(Array.from(env.y).filter((v) => Number.isNaN(v)).length).toBe(2);
  });

  it('indexes an empty series', () => {
    const s = { x: new Float64Array(0), y: new Float64Array(0) };
    const env = envelopeIndexed(s, buildEnvelopeIndex(s), 0, 1, 10);
    expect(env.x.length).toBe(0);
  });
});

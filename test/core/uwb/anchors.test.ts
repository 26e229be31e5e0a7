import { describe, expect, it } from 'vitest';
import { blameAnchors, estimateOffsets, poissonUpperTail, gateZ, type LinkEvidence } from '../../../extension/core/uwb/anchors';

// Constructed cases (the expected blame holds by the rule's construction, see anchors.ts).
const star = (bad: number[], n = 1000, k = 100): LinkEvidence[] =>
  [1, 2, 3, 4, 5].map((j) => ({ a: 0, b: j, n, anomalies: bad.includes(j) ? k : 1 }));

describe('blame rule', () => {
  it('star pairs 0-j, anchor 3 lying: anchor 3 is blamed, not the reference 0 whose other pairs are clean', () => {
    const r = blameAnchors(star([3]), 0.999, 0.01);
    expect([...r.blamed.keys()]).toEqual([3]);
    expect(r.bad).toEqual([false, false, true, false, false]);
  });
  it('star pairs 0-j, the reference lying on every pair... is indistinguishable from a mistuned filter', () => {
    // Every link equally bad: the baseline (median link rate) absorbs it and nothing is blamed (documented limit).
    const r = blameAnchors(star([1, 2, 3, 4, 5]), 0.999, 0.01);
    expect(r.blamed.size).toBe(0);
  });
  it('the reference lying on 3 of 5 pairs: the common anchor 0 is blamed alone', () => {
    const r = blameAnchors(star([1, 2, 3]), 0.999, 0.01);
    expect([...r.blamed.keys()]).toEqual([0]);
    expect(r.blamed.get(0)!.links).toEqual([0, 1, 2]);
  });
  it('an isolated pair whose anchors are in no other pair: both suspect, tied', () => {
    const links: LinkEvidence[] = [
      { a: 0, b: 1, n: 1000, anomalies: 1 }, { a: 1, b: 2, n: 1000, anomalies: 1 }, { a: 2, b: 0, n: 1000, anomalies: 0 },
      { a: 3, b: 4, n: 1000, anomalies: 80 },
    ];
    const r = blameAnchors(links, 0.999, 0.01);
    expect([...r.blamed.keys()].sort()).toEqual([3, 4]);
    expect(r.blamed.get(3)!.tiedWith).toBe(4);
  });
  it('range links: each anomaly implicates one anchor', () => {
    const links: LinkEvidence[] = [0, 1, 2, 3].map((a) => ({ a, b: -1, n: 500, anomalies: a === 2 ? 40 : 0 }));
    expect([...blameAnchors(links, 0.999, 0.01).blamed.keys()]).toEqual([2]);
  });
  it('a significant but tiny excess (0.8% against 0.27%) is not blamed', () => {
    const links: LinkEvidence[] = [{ a: 0, b: -1, n: 1536, anomalies: 12 }, { a: 1, b: -1, n: 1685, anomalies: 3 }, { a: 2, b: -1, n: 1689, anomalies: 6 }, { a: 3, b: -1, n: 1727, anomalies: 3 }];
    expect(blameAnchors(links, 0.999, 0.01).blamed.size).toBe(0);
  });
});

describe('helpers', () => {
  it('Poisson upper tail via chi-square: P(X >= 2 | lambda = 1) = 1 - 2/e (exact)', () => {
    expect(Math.abs(poissonUpperTail(2, 1) - (1 - 2 / Math.E))).toBeLessThan(1e-14);
    expect(poissonUpperTail(0, 3)).toBe(1);
  });
  it('gate z for 0.999 is the two-sided normal point 3.290527 (reference-checks sec 1: chi-square(1) 0.999 = 10.828)', () => {
    expect(Math.abs(gateZ(0.999) - Math.sqrt(10.827566))).toBeLessThan(1e-6);
  });
});

describe('offsets', () => {
  it('TDOA link means b_j - b_i recover the offsets relative to the median anchor (constructed)', () => {
    const b = [0, 0, 0.5, 0, 0];
    const pairs: [number, number][] = [[0, 1], [1, 2], [2, 3], [3, 4], [4, 0], [0, 2]];
    const o = estimateOffsets(pairs.map(([i, j]) => ({ a: i, b: j, mean: b[j] - b[i], sigma: 0.01 })), 5);
    expect(o.relative).toBe(true);
    for (let a = 0; a < 5; a++) expect(Math.abs(o.value[a] - b[a])).toBeLessThan(1e-12);
    // With equal weights, 6 links and 5 anchors, sigma comes from the zero-sum pseudo-inverse: positive and finite.
    expect(Array.from(o.sigma).every((s) => s > 0 && s < 0.02)).toBe(true);
  });
  it('range link means are absolute offsets with their own sigma', () => {
    const o = estimateOffsets([{ a: 0, b: -1, mean: 0.2, sigma: 0.05 }, { a: 2, b: -1, mean: -0.1, sigma: 0.02 }], 3);
    expect(o.relative).toBe(false);
    expect(Math.abs(o.value[0] - 0.2)).toBeLessThan(1e-12);
    expect(Math.abs(o.sigma[2] - 0.02)).toBeLessThan(1e-12);
    expect(Number.isNaN(o.value[1])).toBe(true);
  });
});

describe('small networks', () => {
  it('4-anchor full mesh, anchor 2 lying: it is in half the pairs and still blamed alone', () => {
    const pairs: [number, number][] = [[0, 1], [0, 2], [0, 3], [1, 2], [1, 3], [2, 3]];
    const links = pairs.map(([a, b]) => ({ a, b, n: 800, anomalies: a === 2 || b === 2 ? 60 : 1 }));
    expect([...blameAnchors(links, 0.999, 0.01).blamed.keys()]).toEqual([2]);
  });
});

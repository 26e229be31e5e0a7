/** Reference alignment: interpolation never across gaps, excluded epochs counted, slerp, time-offset estimate. */
import { describe, expect, it } from 'vitest';
import { Quaternion, Vector3 } from 'three';
import {
  ALIGN_IN_GAP, ALIGN_OK, ALIGN_OUTSIDE_SPAN, bracketTimes, estimateTimeOffset, interpolateAttitude, interpolateColumn,
  medianStep, medianStepAtMost,
} from '../../../extension/core/errors/align';
import { seededRandom } from '../geometry/helpers';
import { analyzeErrors } from '../../../extension/core/errors/index';
import { resolveSettings } from '../../../extension/core/settings';
import { navLog, stateStream } from './fixtures';
import { expectClose } from '../geometry/helpers';

describe('bracketTimes / interpolateColumn', () => {
  // [CONSTRUCTED] reference at 1 Hz with a 7 s hole (6 missing samples) between t = 10 and t = 17
  const refT = Float64Array.from([0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 17, 18, 19, 20]);
  const refX = Float64Array.from(refT, (t) => 2 * t + 1);
  const valid = new Uint8Array(refT.length).fill(1);

  it('linear inside, excluded outside the span and in the gap (> 5 reference steps)', () => {
    const est = Float64Array.from([-0.5, 0, 0.25, 9.5, 10, 12, 16.9, 17, 19.75, 20, 20.5]);
    const br = bracketTimes(est, est.length, refT, refT.length, 0, valid, 5 * 1);
    expect(Array.from(br.status)).toEqual([
      ALIGN_OUTSIDE_SPAN, ALIGN_OK, ALIGN_OK, ALIGN_OK, ALIGN_OK, ALIGN_IN_GAP, ALIGN_IN_GAP, ALIGN_OK, ALIGN_OK, ALIGN_OK, ALIGN_OUTSIDE_SPAN,
    ]);
    const x = interpolateColumn(refX, br, new Float64Array(est.length));
    expectClose([x[1], x[2], x[3], x[4], x[7], x[8], x[9]], [1, 1.5, 20, 21, 35, 40.5, 41], 1e-15);
    expect(Number.isNaN(x[5])).toBe(true);
  });

  it('an invalid reference row widens the interval: one dropped row is bridged, a run of six is not', () => {
    const t = Float64Array.from({ length: 30 }, (_, i) => i);
    const v = new Uint8Array(30).fill(1);
    v[5] = 0; // one dropped row: 4..6 is 2 steps wide
    for (let i = 12; i < 18; i++) v[i] = 0; // six dropped rows: 11..18 is 7 steps wide
    const est = Float64Array.from([5, 5.5, 14, 17.5, 18]);
    const br = bracketTimes(est, est.length, t, t.length, 0, v, 5);
    expect(Array.from(br.status)).toEqual([ALIGN_OK, ALIGN_OK, ALIGN_IN_GAP, ALIGN_IN_GAP, ALIGN_OK]);
    expect(br.left[0]).toBe(4); expect(br.right[0]).toBe(6); expect(br.fraction[0]).toBeCloseTo(0.5, 15);
  });

  it('a time offset shifts the reference stamps', () => {
    const br = bracketTimes(Float64Array.of(100.5), 1, refT, refT.length, 100, valid, 5);
    expect(br.status[0]).toBe(ALIGN_OK);
    expect(interpolateColumn(refX, br, new Float64Array(1))[0]).toBeCloseTo(2, 14);
  });

  it('attitude is slerped (cross-check with three slerpQuaternions)', () => {
    const qa = new Quaternion().setFromAxisAngle(new Vector3(0, 0, 1), 0.2);
    const qb = new Quaternion().setFromAxisAngle(new Vector3(0, 1, 0), 1.4);
    const cols = [Float64Array.of(qa.w, qb.w), Float64Array.of(qa.x, qb.x), Float64Array.of(qa.y, qb.y), Float64Array.of(qa.z, qb.z)];
    const br = bracketTimes(Float64Array.of(0.3), 1, Float64Array.of(0, 1), 2, 0, Uint8Array.of(1, 1), 5);
    const out: [Float64Array, Float64Array, Float64Array, Float64Array] = [new Float64Array(1), new Float64Array(1), new Float64Array(1), new Float64Array(1)];
    interpolateAttitude(cols[0], cols[1], cols[2], cols[3], br, out);
    const ts = new Quaternion().slerpQuaternions(qa, qb, 0.3);
    expectClose([out[0][0], out[1][0], out[2][0], out[3][0]], [ts.w, ts.x, ts.y, ts.z], 1e-12);
  });
});

describe('medianStepAtMost', () => {
  it('is true only when the median step (by selection) is at most the cap, and decides the usual logs', () => {
    const rand = seededRandom(21);
    let decided = 0;
    for (let trial = 0; trial < 400; trial++) {
      const n = 2 + Math.floor(rand() * 60);
      const t = new Float64Array(n);
      for (let i = 1; i < n; i++) t[i] = t[i - 1] + (rand() < 0.1 ? 0 : rand() < 0.2 ? -0.5 : 0.01 + rand() * 0.2);
      const cap = 0.02 + rand() * 0.2;
      const exact = medianStep(t, n);
      if (medianStepAtMost(t, 0, n, cap)) { decided++; expect(exact).toBeLessThanOrEqual(cap); }
    }
    expect(decided).toBeGreaterThan(50);
    // [CONSTRUCTED] 100 Hz stamps: a 5 s window's tenth (0.5 s) is far above the step
    const t = Float64Array.from({ length: 1000 }, (_, i) => i / 100);
    expect(medianStepAtMost(t, 0, 1000, 0.5)).toBe(true);
    expect(medianStepAtMost(t, 0, 1000, 0.001)).toBe(false);
    expect(medianStepAtMost(new Float64Array(1), 0, 1, 1)).toBe(false);
  });
});

describe('analyzeErrors with a separate reference at another rate', () => {
  // [CONSTRUCTED] estimate at 10 Hz on a circle, reference at 8 Hz on the same circle with a 3 s hole
  const R = 10, w = 0.2;
  const est = Float64Array.from({ length: 401 }, (_, i) => i * 0.1);
  const refAll = Float64Array.from({ length: 8 * 40 + 1 }, (_, i) => i / 8 - 2); // from -2 s to 38 s
  const refT = refAll.filter((t) => !(t > 20 && t < 23));
  const circle = (t: Float64Array): Record<string, Float64Array> => ({
    p_x: t.map((s) => R * Math.cos(w * s)), p_y: t.map((s) => R * Math.sin(w * s)), p_z: t.map(() => 1),
  });
  it('excluded epochs are counted by reason and no epoch in the hole is compared', () => {
    const log = navLog(stateStream(est, circle(est)), stateStream(refT, circle(refT), 'ref.csv'));
    const out = analyzeErrors(log, resolveSettings({}));
    const b = out.block;
    if (!b?.position) throw new Error('no block');
    const outside = Array.from(est).filter((t) => t > 38).length;
    const inGap = Array.from(est).filter((t) => t > 20 + 1e-9 && t < 23 - 1e-9).length;
    expect(b.excludedOutsideSpan).toBe(outside);
    expect(b.excludedInGap).toBe(inGap);
    expect(b.excluded).toBe(outside + inGap);
    expect(b.epochs).toBe(est.length - outside - inGap);
    // chord error of linear interpolation on the circle: at most R (1 - cos(w dt / 2)) with dt = 1/8 s
    expect(b.position.max as number).toBeLessThan(R * (1 - Math.cos((w / 8) / 2)) + 1e-12);
    const ex = out.series.find((s) => s.key === 'error/position/x');
    if (!ex) throw new Error('no series');
    for (let k = 0; k < ex.x.length; k++) if (ex.x[k] > 20 && ex.x[k] < 23) expect(Number.isNaN(ex.y[k])).toBe(true);
  });

  it('window limits the comparison; referenceOffset_m shifts the reference', () => {
    const log = navLog(stateStream(est, circle(est)), stateStream(refT, circle(refT), 'ref.csv'));
    const out = analyzeErrors(log, resolveSettings({ window: [5, 15], referenceOffset_m: [0, 0, 0.5] }));
    const b = out.block;
    if (!b?.position) throw new Error('no block');
    expect(b.epochs).toBe(101);
    expect(b.outsideWindow).toBe(300);
    expect(b.position.meanPerAxis?.[2]).toBeCloseTo(0.5, 12);
    expect(b.position.rmse2d as number).toBeLessThan(1e-2);
  });

  it('estimates a known time offset from the speed profiles', () => {
    // [CONSTRUCTED] speed varies (accelerating along x); the reference clock runs 0.37 s behind
    const x = (t: number): number => 0.05 * t * t + 2 * Math.sin(t);
    const tRef = Float64Array.from({ length: 400 }, (_, i) => i * 0.125);
    const refCols = { p_x: Float64Array.from(tRef, (t) => x(t + 0.37)), p_y: new Float64Array(400), p_z: new Float64Array(400) };
    const estCols = { p_x: Float64Array.from(est, x), p_y: new Float64Array(est.length), p_z: new Float64Array(est.length) };
    const log = navLog(stateStream(est, estCols), stateStream(tRef, refCols, 'ref.csv'));
    const out = analyzeErrors(log, resolveSettings({ estimateTimeOffset: true }));
    expect(out.block?.timeOffsetEstimated).toBe(true);
    expect(Math.abs((out.block?.timeOffset_s as number) - 0.37)).toBeLessThan(0.02);
    expect(out.block?.position?.rmse as number).toBeLessThan(0.05);
    // direct check of the estimator on the speeds
    expect(Number.isNaN(estimateTimeOffset(Float64Array.of(0, 1), Float64Array.of(1, 1), 2, Float64Array.of(0, 1), Float64Array.of(1, 1), 2, 1))).toBe(true);
  });
});

describe('reference stamps out of order', () => {
  it('are put in time order before interpolation', () => {
    // [CONSTRUCTED] the same 1 Hz samples as above, with two rows swapped
    const t = Float64Array.of(0, 1, 3, 2, 4);
    const x = Float64Array.from(t, (s) => 10 * s);
    const br = bracketTimes(Float64Array.of(2.5, 3.5), 2, t, 5, 0, new Uint8Array(5).fill(1), 5);
    expect(Array.from(br.status)).toEqual([ALIGN_OK, ALIGN_OK]);
    expectClose(interpolateColumn(x, br, new Float64Array(2)), [25, 35], 1e-15);
  });
});

/**
 * analyzeErrors: error conventions (nav/body side, invariant SE(3)/SE2(3)), lever arm, full-P joint NEES, resets,
 * convergence, +-3 sigma shares, and the report rule that every number is finite. Cases are [CONSTRUCTED] with the
 * expected value holding by construction; independent libraries (three, mathjs) recompute where named.
 */
import { describe, expect, it } from 'vitest';
import { Quaternion } from 'three';
import { inv, multiply } from 'mathjs';
import { analyzeErrors } from '../../../extension/core/errors/index';
import { resolveSettings } from '../../../extension/core/settings';
import { quatExp, quatMultiply, quatRotate } from '../../../extension/core/geometry/quat';
import { matFromQuat, quatFromMat } from '../../../extension/core/geometry/so3';
import { se3Compose, se3Exp, se3FromRt } from '../../../extension/core/geometry/se3';
import { se23Compose, se23Exp, se23FromRvp } from '../../../extension/core/geometry/se23';
import type { NavLog } from '../../../extension/core/model';
import { navLog, stateStream } from './fixtures';
import { gaussian, seededRandom } from '../geometry/helpers';
import { simulateRun } from './simulate';

/** Every number reachable from v is finite (the report contract). */
function expectAllFinite(v: unknown, where = 'block'): void {
  if (typeof v === 'number') { if (!Number.isFinite(v)) throw new Error(`${where} = ${v}`); return; }
  if (Array.isArray(v)) { v.forEach((x, i) => { if (x !== null) expectAllFinite(x, `${where}[${i}]`); }); return; }
  if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) if (x !== undefined) expectAllFinite(x, `${where}.${k}`);
}

const N = 200;
const g = gaussian(seededRandom(4242));
const t = Float64Array.from({ length: N }, (_, i) => i * 0.1);

/** Random estimate attitudes and positions, and small tangent perturbations. */
const estQ = Array.from({ length: N }, () => { const q = quatExp(new Float64Array(4), [g(), g(), g()]); return q; });
const estP = Array.from({ length: N }, () => [g() * 20, g() * 20, g()]);
const estV = Array.from({ length: N }, () => [g() * 2, g() * 2, g() * 0.1]);
const xi = Array.from({ length: N }, () => [g() * 0.02, g() * 0.02, g() * 0.02, g() * 0.1, g() * 0.1, g() * 0.1, g() * 0.3, g() * 0.3, g() * 0.3]);

function columns(q: Float64Array[], p: number[][], v?: number[][], prefix = ''): Record<string, Float64Array> {
  const c: Record<string, Float64Array> = {};
  ['w', 'x', 'y', 'z'].forEach((a, i) => { c[`${prefix}q_${a}`] = Float64Array.from(q, (x) => x[i]); });
  ['x', 'y', 'z'].forEach((a, i) => { c[`${prefix}p_${a}`] = Float64Array.from(p, (x) => x[i]); });
  if (v) ['x', 'y', 'z'].forEach((a, i) => { c[`${prefix}v_${a}`] = Float64Array.from(v, (x) => x[i]); });
  return c;
}

function withSigmas(c: Record<string, Float64Array>, sAtt: number, sPos: number, sVel?: number): Record<string, Float64Array> {
  for (const a of ['x', 'y', 'z']) {
    c[`sigma_att_${a}`] = new Float64Array(N).fill(sAtt);
    c[`sigma_p_${a}`] = new Float64Array(N).fill(sPos);
    if (sVel !== undefined) c[`sigma_v_${a}`] = new Float64Array(N).fill(sVel);
  }
  return c;
}

describe('orientation error conventions', () => {
  it('navigation side: R_true = Exp(d) R_est gives error d; body side gives R_est^T d; angle agrees with three', () => {
    const trueQ = estQ.map((q, k) => quatMultiply(new Float64Array(4), quatExp(new Float64Array(4), Float64Array.from(xi[k].slice(0, 3))), q) as Float64Array);
    const cols = { ...withSigmas(columns(estQ, estP), 0.02, 1), ...columns(trueQ, estP, undefined, 'gt_') };
    for (const side of ['nav', 'body'] as const) {
      const log = navLog(stateStream(t, cols), undefined, { conventions: { attitudeErrorSide: side } });
      const out = analyzeErrors(log, resolveSettings({}));
      const ex = out.series.find((s) => s.key === 'error/orientation/x');
      const ez = out.series.find((s) => s.key === 'error/orientation/z');
      if (!ex || !ez) throw new Error('no series');
      for (const k of [0, 17, 150]) {
        const d = xi[k].slice(0, 3);
        const expected = side === 'nav' ? d : Array.from(quatRotate(new Float64Array(3), [estQ[k][0], -estQ[k][1], -estQ[k][2], -estQ[k][3]], d as never));
        expect(ex.y[k]).toBeCloseTo((expected[0] * 180) / Math.PI, 9);
        expect(ez.y[k]).toBeCloseTo((expected[2] * 180) / Math.PI, 9);
      }
      // rmse of the angles, recomputed with three's angleTo
      let s = 0, mx = 0;
      for (let k = 0; k < N; k++) {
        const a = new Quaternion(estQ[k][1], estQ[k][2], estQ[k][3], estQ[k][0]);
        const b = new Quaternion(trueQ[k][1], trueQ[k][2], trueQ[k][3], trueQ[k][0]);
        const ang = a.angleTo(b);
        s += ang * ang; mx = Math.max(mx, ang);
      }
      expect(out.block?.orientation?.rmseDeg).toBeCloseTo((Math.sqrt(s / N) * 180) / Math.PI, 9);
      expect(out.block?.orientation?.maxDeg).toBeCloseTo((mx * 180) / Math.PI, 9);
      expect(out.block?.definition.attitude).toBe(side);
      if (side === 'nav') {
        // NEES with sigma 0.02 rad: sum d_i^2 / 0.02^2
        const mean = xi.reduce((acc, x) => acc + (x[0] ** 2 + x[1] ** 2 + x[2] ** 2) / 0.0004, 0) / N;
        expect(out.block?.orientation?.nees?.mean).toBeCloseTo(mean, 9);
      }
    }
  });
});

describe('invariant errors for the NEES (Barrau and Bonnabel 2017)', () => {
  const sAtt = 0.02, sVel = 0.1, sPos = 0.3;
  const expectedMean = (parts: number[][]): number => xi.reduce((acc, x) => {
    let q = 0;
    for (const [from, to, s] of parts) for (let i = from; i < to; i++) q += (x[i] / s) ** 2;
    return acc + q;
  }, 0) / N;

  for (const side of ['nav', 'body'] as const) {
    it(`SE(3), ${side} side: X_true = ${side === 'nav' ? 'exp(xi) X_est' : 'X_est exp(xi)'} gives NEES parts of xi`, () => {
      const trueQ: Float64Array[] = [], trueP: number[][] = [];
      for (let k = 0; k < N; k++) {
        const X = se3FromRt(new Float64Array(12), matFromQuat(new Float64Array(9), estQ[k]), estP[k] as never);
        const E = se3Exp(new Float64Array(12), [xi[k][0], xi[k][1], xi[k][2], xi[k][6], xi[k][7], xi[k][8]]);
        const Y = side === 'nav' ? se3Compose(new Float64Array(12), E, X) : se3Compose(new Float64Array(12), X, E);
        trueQ.push(quatFromMat(new Float64Array(4), Y) as Float64Array); trueP.push([Y[9], Y[10], Y[11]]);
      }
      const cols = { ...withSigmas(columns(estQ, estP), sAtt, sPos), ...columns(trueQ, trueP, undefined, 'gt_') };
      const log = navLog(stateStream(t, cols), undefined, { conventions: { attitudeErrorSide: side, errorGroup: 'SE3' } });
      const b = analyzeErrors(log, resolveSettings({})).block;
      expect(b?.orientation?.nees?.mean).toBeCloseTo(expectedMean([[0, 3, sAtt]]), 8);
      expect(b?.position?.nees?.mean).toBeCloseTo(expectedMean([[6, 9, sPos]]), 8);
      expect(b?.notes.some((n) => n.includes(side === 'nav' ? 'right-invariant' : 'left-invariant'))).toBe(true);
    });

    it(`SE2(3), ${side} side, with velocity`, () => {
      const trueQ: Float64Array[] = [], trueP: number[][] = [], trueV: number[][] = [];
      for (let k = 0; k < N; k++) {
        const X = se23FromRvp(new Float64Array(15), matFromQuat(new Float64Array(9), estQ[k]), estV[k] as never, estP[k] as never);
        const E = se23Exp(new Float64Array(15), xi[k]);
        const Y = side === 'nav' ? se23Compose(new Float64Array(15), E, X) : se23Compose(new Float64Array(15), X, E);
        trueQ.push(quatFromMat(new Float64Array(4), Y) as Float64Array); trueV.push([Y[9], Y[10], Y[11]]); trueP.push([Y[12], Y[13], Y[14]]);
      }
      const cols = { ...withSigmas(columns(estQ, estP, estV), sAtt, sPos, sVel), ...columns(trueQ, trueP, trueV, 'gt_') };
      const log = navLog(stateStream(t, cols), undefined, { conventions: { attitudeErrorSide: side, errorGroup: 'SE23' } });
      const b = analyzeErrors(log, resolveSettings({})).block;
      expect(b?.orientation?.nees?.mean).toBeCloseTo(expectedMean([[0, 3, sAtt]]), 8);
      expect(b?.velocity?.nees?.mean).toBeCloseTo(expectedMean([[3, 6, sVel]]), 8);
      expect(b?.position?.nees?.mean).toBeCloseTo(expectedMean([[6, 9, sPos]]), 8);
    });
  }
});

describe('lever arm and full covariance', () => {
  it('a reference measured at a point offset by l in the body frame matches once leverArm_m = l', () => {
    const l: [number, number, number] = [0.4, -0.1, 0.8];
    const refP = estP.map((p, k) => { const r = quatRotate(new Float64Array(3), estQ[k], l as never); return [p[0] - r[0], p[1] - r[1], p[2] - r[2]]; });
    const log = navLog(stateStream(t, { ...columns(estQ, estP), ...columns(estQ, refP, undefined, 'gt_') }));
    expect(analyzeErrors(log, resolveSettings({})).block?.position?.rmse as number).toBeGreaterThan(0.5);
    expect(analyzeErrors(log, resolveSettings({ leverArm_m: l })).block?.position?.rmse as number).toBeLessThan(1e-12);
  });

  it('joint NEES from a full P equals e^T P^-1 e (mathjs inv)', () => {
    const states = ['p_x', 'p_y', 'p_z', 'v_x', 'v_y', 'v_z'];
    const Pm = new Float64Array(N * 36);
    const base = [[1, 0.3, 0, 0.1, 0, 0], [0.3, 2, 0.2, 0, 0.1, 0], [0, 0.2, 1.5, 0, 0, 0.05], [0.1, 0, 0, 0.5, 0.1, 0], [0, 0.1, 0, 0.1, 0.4, 0], [0, 0, 0.05, 0, 0, 0.3]];
    for (let k = 0; k < N; k++) for (let r = 0; r < 6; r++) for (let c = 0; c < 6; c++) Pm[k * 36 + r * 6 + c] = base[r][c];
    const err = Array.from({ length: N }, () => [g(), g(), g(), g() * 0.5, g() * 0.5, g() * 0.5]);
    const estPP = estP, estVV = estV;
    const gtP = estPP.map((p, k) => [p[0] + err[k][0], p[1] + err[k][1], p[2] + err[k][2]]);
    const gtV = estVV.map((v, k) => [v[0] + err[k][3], v[1] + err[k][4], v[2] + err[k][5]]);
    const cols: Record<string, Float64Array> = {};
    ['x', 'y', 'z'].forEach((a, i) => {
      cols[`p_${a}`] = Float64Array.from(estPP, (p) => p[i]); cols[`v_${a}`] = Float64Array.from(estVV, (v) => v[i]);
      cols[`gt_p_${a}`] = Float64Array.from(gtP, (p) => p[i]); cols[`gt_v_${a}`] = Float64Array.from(gtV, (v) => v[i]);
    });
    const s = stateStream(t, cols);
    s.P = { states, matrix: Pm };
    const b = analyzeErrors(navLog(s), resolveSettings({})).block;
    const Pinv = inv(base) as number[][];
    let mean = 0, meanPos = 0;
    const Ppos = inv(base.slice(0, 3).map((r) => r.slice(0, 3))) as number[][];
    for (const e of err) {
      mean += (multiply(e, multiply(Pinv, e)) as unknown as number) / N;
      const ep = e.slice(0, 3);
      meanPos += (multiply(ep, multiply(Ppos, ep)) as unknown as number) / N;
    }
    expect(b?.joint?.dof).toBe(6);
    expect(analyzeErrors(navLog(s), resolveSettings({})).series.some((x) => x.key === 'nees/joint')).toBe(true);
    expect(b?.joint?.mean).toBeCloseTo(mean, 9);
    expect(b?.position?.nees?.mean).toBeCloseTo(meanPos, 9);
    expect(b?.within3Sigma.position?.length).toBe(3);
  });
});

describe('segments, convergence, +-3 sigma', () => {
  it('an exponential decay after each reset: rate and settling time per segment', () => {
    // [CONSTRUCTED] error norm 5 exp(-0.5 (t - t_reset)) + 0.05 (constant floor) along x; resets at 0 and 60 s
    const n = 1200, dt = 0.1;
    const tt = Float64Array.from({ length: n }, (_, i) => i * dt);
    const ex = Float64Array.from(tt, (s) => { const r = s >= 60 ? s - 60 : s; return 5 * Math.exp(-0.5 * r) + 0.05; });
    const cols = { p_x: new Float64Array(n), p_y: new Float64Array(n), p_z: new Float64Array(n), gt_p_x: ex, gt_p_y: new Float64Array(n), gt_p_z: new Float64Array(n) };
    const log: NavLog = navLog(stateStream(tt, cols), undefined, { resets: [60] });
    const b = analyzeErrors(log, resolveSettings({ window_s: 1 })).block;
    expect(b?.segments.length).toBe(2);
    for (const seg of b?.segments ?? []) {
      const c = seg.position?.convergence;
      if (!c || c.rate === undefined || c.settleTime === undefined) throw new Error('no convergence');
      // steady state ~0.05 (the floor plus a vanishing tail); settles when 5 e^{-0.5 r} + 0.05 <= ~2 x 0.05
      expect(c.steadyState as number).toBeGreaterThan(0.05);
      expect(c.steadyState as number).toBeLessThan(0.06);
      expect(c.settleTime).toBeGreaterThan(7);
      expect(c.settleTime).toBeLessThan(10);
      expect(Math.abs(c.rate - 0.5) / 0.5).toBeLessThan(0.15); // the floor bends the log-linear fit a little
    }
    expect(b?.convergence.position?.settleTime).toBe(b?.segments[0].position?.convergence.settleTime);
  });

  it('a consistent simulated run has about 99.7% of errors inside +-3 sigma per axis', () => {
    const b = analyzeErrors(simulateRun({ seed: 77, epochs: 20000 }), resolveSettings({})).block;
    for (const s of b?.within3Sigma.position ?? []) {
      expect(s as number).toBeGreaterThan(0.99);
      expect(s as number).toBeLessThanOrEqual(1);
    }
    expect(b?.within3Sigma.expected).toBe(0.9973);
  });
});

describe('report rules', () => {
  it('every number in the block is finite; ATE and relative error are present', () => {
    const out = analyzeErrors(simulateRun({ seed: 3 }), resolveSettings({}));
    expectAllFinite(out.block);
    expect(out.block?.position?.ate?.rmse as number).toBeLessThanOrEqual(out.block?.position?.rmse as number);
    expect(out.block?.position?.rpe?.time?.count as number).toBeGreaterThan(0);
    expect(out.block?.position?.rpe?.distance?.window_m as number).toBeGreaterThan(0);
    const keys = out.series.map((s) => s.key);
    for (const k of ['error/position/x', 'error/position/y', 'error/position/z', 'nees/position', 'trajectory/estimate', 'trajectory/reference']) expect(keys).toContain(k);
    const e = out.series.find((s) => s.key === 'error/position/x');
    expect(e?.lo?.[10]).toBeCloseTo(-1.5, 12); // -3 sigma with sigma 0.5
  });

  it('no reference: no block; bad data: no throw', () => {
    const plain = navLog(stateStream([0, 1, 2], { p_x: [0, 1, 2], p_y: [0, 0, 0] }));
    expect(analyzeErrors(plain, resolveSettings({})).block).toBeUndefined();
    const bad = navLog(stateStream([0, 1, 2], { p_x: [NaN, Infinity, 1], p_y: [0, 0, 0], gt_p_x: [NaN, NaN, NaN], gt_p_y: [1, 2, 3] }));
    const out = analyzeErrors(bad, resolveSettings({}));
    expect(out.block?.excluded).toBe(3);
    expectAllFinite(out.block);
    const empty = navLog(stateStream([], { p_x: [], gt_p_x: [], p_y: [], gt_p_y: [] }));
    expect(() => analyzeErrors(empty, resolveSettings({}))).not.toThrow();
  });
});

describe('the errors block inside a whole report', () => {
  it('validates against the report JSON Schema (analyzeLog on a simulated run with a reset)', async () => {
    const { analyzeLog } = await import('../../../extension/core/analyze');
    const { reportProblems } = await import('../../helpers/reportSchema');
    const log = simulateRun({ seed: 8, scaled: { t0: 300, t1: 360, factor: 0.5 } });
    log.resets = [400];
    const { report } = analyzeLog(log, resolveSettings({}));
    expect(reportProblems(report)).toEqual([]);
    expect(report.errors?.excluded).toBe(0);
    expect(report.findings.some((f) => f.kind === 'inconsistent' && f.channel === 'position')).toBe(true);
  });
});

describe('2-D velocity', () => {
  it('is compared horizontally when neither side has a vertical velocity', () => {
    const tt = Float64Array.of(0, 1, 2, 3);
    const log = navLog(stateStream(tt, { v_x: [1, 1, 1, 1], v_y: [0, 0, 0, 0], gt_v_x: [1.5, 1.5, 1.5, 1.5], gt_v_y: [0, 0, 0, 0], sigma_v_x: [0.5, 0.5, 0.5, 0.5], sigma_v_y: [1, 1, 1, 1] }));
    const b = analyzeErrors(log, resolveSettings({})).block;
    expect(b?.velocity?.rmse).toBeCloseTo(0.5, 15);
    expect(b?.velocity?.nees?.dof).toBe(2);
    expect(b?.velocity?.nees?.mean).toBeCloseTo(1, 15);
  });
});

describe('ATE and relative error under a rigid frame change', () => {
  it('an estimate that is the reference in a rotated, shifted frame has zero ATE and zero relative error, large raw error', () => {
    // [CONSTRUCTED] est pose = G ∘ true pose with G a constant rigid transform: alignment removes G exactly, and
    // body-frame displacements between epochs are identical
    const Gq = quatExp(new Float64Array(4), Float64Array.of(0.1, -0.2, 0.9));
    const Gt = [3, -4, 0.5];
    const n = N;
    const tq = estQ, tp = Array.from({ length: n }, (_, k) => [10 * Math.cos(k / 20), 10 * Math.sin(k / 20), 0.1 * k]);
    const eq = tq.map((q) => quatMultiply(new Float64Array(4), Gq, q) as Float64Array);
    const ep = tp.map((p) => { const r = quatRotate(new Float64Array(3), Gq, Float64Array.from(p)); return [r[0] + Gt[0], r[1] + Gt[1], r[2] + Gt[2]]; });
    const log = navLog(stateStream(t, { ...columns(eq, ep), ...columns(tq, tp, undefined, 'gt_') }));
    const b = analyzeErrors(log, resolveSettings({ window_s: 2, rpeDistance_m: 3 })).block;
    expect(b?.position?.rmse as number).toBeGreaterThan(1);
    expect(b?.position?.ate?.rmse as number).toBeLessThan(1e-9);
    expect(b?.position?.ate?.rotationDeg as number).toBeCloseTo((2 * Math.atan2(Math.hypot(Gq[1], Gq[2], Gq[3]), Gq[0]) * 180) / Math.PI, 6);
    expect(b?.position?.rpe?.time?.max as number).toBeLessThan(1e-9);
    expect(b?.position?.rpe?.distance?.max as number).toBeLessThan(1e-9);
    expect(b?.position?.rpe?.time?.count as number).toBeGreaterThan(100);
  });
});

/** Umeyama alignment: the paper's worked example (with its reflection trap) and the constructed 3-D case. */
import { describe, expect, it } from 'vitest';
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { umeyama } from '../../../extension/core/errors/umeyama';
import { matFromEulerZYX, matFromQuat } from '../../../extension/core/geometry/so3';
import { expectClose, gaussian, seededRandom } from '../geometry/helpers';

const deg = Math.PI / 180;

describe('Umeyama (1991) worked example, 2-D', () => {
  // Source: reference-checks.md sec 4.1: x = {(0,0),(1,0),(0,2)}, y = {(0,0),(-1,0),(0,2)};
  // full-precision values [COMPUTED] with ml-matrix; paper's 3-dp R = [[0.832, 0.555], [-0.555, 0.832]], c = 0.721, t = (-0.8, 0.4)
  const x = [0, 0, 1, 0, 0, 2];
  const y = [0, 0, -1, 0, 0, 2];
  it('similarity: c, R, t, residual, variance and singular values to 1e-9', () => {
    const a = umeyama(x, y, 3, 2, true);
    if (!a) throw new Error('no alignment');
    expect(Math.abs(a.scale - 0.7211102551)).toBeLessThan(1e-9);
    expectClose(a.R, [0.8320502943, 0.5547001962, -0.5547001962, 0.8320502943], 1e-9);
    expectClose(a.t, [-0.8, 0.4], 1e-9);
    expect(Math.abs(a.meanSquaredError - 0.533333333333)).toBeLessThan(1e-9);
    expect(Math.abs(a.varianceX - 1.111111111111)).toBeLessThan(1e-9);
    expectClose(a.singularValues, [0.956172, 0.154939], 1e-6); // given to 6 decimals
    // the paper's 3-dp figures
    expect(Math.abs(a.scale - 0.721)).toBeLessThan(5e-4);
    expect(Math.abs(a.R[1] - 0.555)).toBeLessThan(5e-4);
  });
  it('reflection case: det R = +1 although the reflection x -> -x fits exactly', () => {
    const a = umeyama(x, y, 3, 2, true);
    if (!a) throw new Error('no alignment');
    expect(a.R[0] * a.R[3] - a.R[1] * a.R[2]).toBeCloseTo(1, 12);
    // without Umeyama's S correction the SVD gives the reflection (det -1): check that the trap is real
    const xm = [1 / 3, 2 / 3], ym = [-1 / 3, 2 / 3];
    const S = Matrix.zeros(2, 2);
    for (let i = 0; i < 3; i++) for (let r = 0; r < 2; r++) for (let c = 0; c < 2; c++) S.set(r, c, S.get(r, c) + (y[2 * i + r] - ym[r]) * (x[2 * i + c] - xm[c]) / 3);
    const svd = new SingularValueDecomposition(S);
    const naive = svd.leftSingularVectors.mmul(svd.rightSingularVectors.transpose());
    expect(naive.get(0, 0) * naive.get(1, 1) - naive.get(0, 1) * naive.get(1, 0)).toBeCloseTo(-1, 12);
  });
});

describe('constructed 3-D case', () => {
  // Source: reference-checks.md sec 4.2 [CONSTRUCTED + COMPUTED]: y = 2 R x + (1, -2, 3), R = ZYX(30, 20, 10) deg;
  // Horn's quaternion (0.9515485246, 0.0381345765, 0.1893078574, 0.2392983377) and scale 2; Umeyama must agree (tol 1e-9).
  const x = [0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1, 1, 1, 1];
  const y = [1, -2, 3, 2.627595363, -1.060307379, 2.315959713, 0.118060779, -0.234871761, 3.326351822,
    1.757044613, -1.963943378, 4.850833157, 2.502700754, 0.740877482, 4.493144692];
  it('recovers the rotation, scale 2 and translation', () => {
    const a = umeyama(x, y, 5, 3, true);
    if (!a) throw new Error('no alignment');
    const Rq = matFromQuat(new Float64Array(9), [0.9515485246, 0.0381345765, 0.1893078574, 0.2392983377]);
    expectClose(a.R, Rq, 1e-9);
    expect(Math.abs(a.scale - 2)).toBeLessThan(1e-9);
    expectClose(a.t, [1, -2, 3], 1e-9);
    expect(a.meanSquaredError).toBeLessThan(1e-16);
  });
  it('rigid fit of a rigidly moved noisy cloud recovers the motion (seeded)', () => {
    const g = gaussian(seededRandom(99));
    const R = matFromEulerZYX(new Float64Array(9), 120 * deg, -40 * deg, 75 * deg);
    const n = 200, xs: number[] = [], ys: number[] = [];
    for (let i = 0; i < n; i++) {
      const p = [g() * 10, g() * 10, g() * 3];
      xs.push(...p);
      for (let r = 0; r < 3; r++) ys.push(R[3 * r] * p[0] + R[3 * r + 1] * p[1] + R[3 * r + 2] * p[2] + [5, -7, 0.5][r] + g() * 1e-3);
    }
    const a = umeyama(xs, ys, n, 3, false);
    if (!a) throw new Error('no alignment');
    expect(a.scale).toBe(1);
    expectClose(a.R, R, 1e-4);
    expectClose(a.t, [5, -7, 0.5], 1e-3);
  });
  it('too few or degenerate points give no alignment', () => {
    expect(umeyama([1, 2, 3], [1, 2, 3], 1, 3, false)).toBeUndefined();
    expect(umeyama([1, 1, 1, 1], [0, 0, 1, 1], 2, 2, false)).toBeUndefined();
  });
});

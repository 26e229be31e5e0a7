/**
 * SE(3) and SE2(3): a table-driven identity suite (exp(log X) = X, X X^-1 = I, between(X, X) = I) over identity,
 * tiny (1e-8), seeded random and near-pi fixtures, in the manner of manif's common tester (common practice).
 */
import { describe, expect, it } from 'vitest';
import { se3Act, se3Between, se3Compose, se3Create, se3Exp, se3Inverse, se3Log } from '../../../extension/core/geometry/se3';
import { se23Between, se23Compose, se23Create, se23Exp, se23Inverse, se23Log } from '../../../extension/core/geometry/se23';
import { so3Exp } from '../../../extension/core/geometry/so3';
import { expectClose, gaussian, seededRandom } from './helpers';

const rand = seededRandom(12345);
const g = gaussian(rand);

function tangent(n: number, rotAngle: number, transScale: number): Float64Array {
  const xi = new Float64Array(n);
  const a = [g(), g(), g()];
  const an = Math.hypot(a[0], a[1], a[2]);
  for (let i = 0; i < 3; i++) xi[i] = (a[i] / an) * rotAngle;
  for (let i = 3; i < n; i++) xi[i] = g() * transScale;
  return xi;
}

const groups = [
  { name: 'SE(3)', n: 6, size: 12, exp: se3Exp, log: se3Log, compose: se3Compose, inverse: se3Inverse, between: se3Between, id: se3Create },
  { name: 'SE2(3)', n: 9, size: 15, exp: se23Exp, log: se23Log, compose: se23Compose, inverse: se23Inverse, between: se23Between, id: se23Create },
];
const fixtures: [string, number, number][] = [
  ['identity', 0, 0],
  ['tiny 1e-8', 1e-8, 1e-8],
  ['random', 1.1, 3],
  ['random large translation', 2.2, 50],
  ['near pi', Math.PI - 1e-4, 2],
];

describe.each(groups)('$name identities', (G) => {
  it.each(fixtures)('%s', (_name, angle, trans) => {
    for (let rep = 0; rep < 5; rep++) {
      const xi = tangent(G.n, angle, trans);
      const X = G.exp(new Float64Array(G.size), xi);
      const back = G.log(new Float64Array(G.n), X);
      expectClose(back, xi, angle > 3 ? 1e-9 : 1e-12);
      expectClose(G.exp(new Float64Array(G.size), back), X, 1e-11);
      const Xi = G.inverse(new Float64Array(G.size), X);
      expectClose(G.compose(new Float64Array(G.size), X, Xi), G.id(), 1e-12);
      expectClose(G.compose(new Float64Array(G.size), Xi, X), G.id(), 1e-12);
      expectClose(G.between(new Float64Array(G.size), X, X), G.id(), 1e-12);
      // log(X^-1) = -log(X)
      const li = G.log(new Float64Array(G.n), Xi);
      expectClose(li, back.map((v) => -v), angle > 3 ? 1e-9 : 1e-12);
    }
  });

  it('compose is associative and between(a, b) = a^-1 b', () => {
    const a = G.exp(new Float64Array(G.size), tangent(G.n, 0.7, 2));
    const b = G.exp(new Float64Array(G.size), tangent(G.n, 1.9, 5));
    const c = G.exp(new Float64Array(G.size), tangent(G.n, 2.5, 1));
    const ab_c = G.compose(new Float64Array(G.size), G.compose(new Float64Array(G.size), a, b), c);
    const a_bc = G.compose(new Float64Array(G.size), a, G.compose(new Float64Array(G.size), b, c));
    expectClose(ab_c, a_bc, 1e-12);
    const d = G.between(new Float64Array(G.size), a, b);
    expectClose(G.compose(new Float64Array(G.size), a, d), b, 1e-12);
  });
});

describe('SE(3) exp has the closed form of a screw motion', () => {
  it('pure rotation about z with rho along z translates along the axis by rho', () => {
    // [CONSTRUCTED] for phi parallel to rho, J_l(phi) rho = rho (hat(phi) rho = 0)
    const X = se3Exp(new Float64Array(12), [0, 0, 1.2, 0, 0, 2.0]);
    expectClose(X.subarray(9), [0, 0, 2.0], 1e-15);
    expectClose(X.subarray(0, 9), so3Exp(new Float64Array(9), [0, 0, 1.2]), 1e-15);
  });
  it('a half turn about z with rho along x moves the origin to (0, 2 rho / pi)', () => {
    // [CONSTRUCTED] the origin moves along a semicircle of length rho; its chord is 2 rho / pi along y
    const X = se3Exp(new Float64Array(12), [0, 0, Math.PI, 1, 0, 0]);
    expectClose(X.subarray(9), [0, 2 / Math.PI, 0], 1e-15);
    const p = se3Act(new Float64Array(3), X, Float64Array.of(1, 0, 0));
    expectClose(p, [-1, 2 / Math.PI, 0], 1e-15);
    expect(X[0]).toBeCloseTo(-1, 15);
  });
});

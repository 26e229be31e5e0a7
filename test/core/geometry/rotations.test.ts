/**
 * Rotation conventions and SO(3) maps: the published cases of reference-checks.md sec 5.2 and a cross-check
 * against three 0.187.0 (float64, w-last, Hamilton) on seeded random rotations.
 */
import { describe, expect, it } from 'vitest';
import { Euler, Matrix4, Quaternion, Vector3 } from 'three';
import {
  quatAngle, quatAngleBetween, quatConjugate, quatCreate, quatExp, quatLog, quatMultiply, quatNormalize, quatRotate,
  quatSlerp, type QuatWXYZ,
} from '../../../extension/core/geometry/quat';
import {
  eulerZYXFromMat, eulerZYXFromQuat, mat3Create, mat3Multiply, matFromEulerZYX, matFromQuat, quatFromEulerZYX,
  quatFromMat, rotationDefect, so3Angle, so3AngleBetween, so3Exp, so3LeftJacobian, so3LeftJacobianInverse, so3Log,
} from '../../../extension/core/geometry/so3';
import { expectClose, gaussian, seededRandom } from './helpers';

const TOL = 1e-12; // Source: reference-checks.md sec 5.2 ("Tolerance is 1e-12 with float64 arrays")
const deg = Math.PI / 180;
const v3 = (x: number, y: number, z: number): Float64Array => Float64Array.of(x, y, z);

/** Our [w,x,y,z] into three's Quaternion(x,y,z,w) (three stores w last). */
function toThree(q: QuatWXYZ): Quaternion {
  return new Quaternion(q[1], q[2], q[3], q[0]);
}

/** three's column-major Matrix4 into our row-major 3x3. */
function threeMat3(m: Matrix4): Float64Array {
  const e = m.elements;
  return Float64Array.of(e[0], e[4], e[8], e[1], e[5], e[9], e[2], e[6], e[10]);
}

/** Same rotation up to sign. */
function expectSameQuat(a: QuatWXYZ, b: QuatWXYZ, tol: number): void {
  const s = a[0] * b[0] + a[1] * b[1] + a[2] * b[2] + a[3] * b[3] < 0 ? -1 : 1;
  expectClose(a, [s * b[0], s * b[1], s * b[2], s * b[3]], tol);
}

function randomQuat(rand: () => number): Float64Array {
  const g = gaussian(rand);
  const q = quatCreate(g(), g(), g(), g());
  return quatNormalize(q, q) as Float64Array;
}

describe('reference-checks sec 5.2 cases', () => {
  it('case 1: 90 deg about z', () => {
    // Source: reference-checks.md sec 5.2 case 1 [COMPUTED with three/gl-matrix/quaternion]
    const q = quatCreate(Math.SQRT1_2, 0, 0, Math.SQRT1_2);
    const R = matFromQuat(new Float64Array(9), q);
    expectClose(R, [0, -1, 0, 1, 0, 0, 0, 0, 1], TOL);
    expect(R[0] + R[4] + R[8]).toBeCloseTo(1, 12);
    expect(so3Angle(R)).toBeCloseTo(90 * deg, 12);
    expectClose(quatRotate(new Float64Array(3), q, v3(1, 0, 0)), [0, 1, 0], TOL);
  });

  it('case 2: 120 deg about (1,1,1)/sqrt(3) maps x -> y -> z -> x', () => {
    // Source: reference-checks.md sec 5.2 case 2
    const q = quatCreate(0.5, 0.5, 0.5, 0.5);
    const R = matFromQuat(new Float64Array(9), q);
    expectClose(R, [0, 0, 1, 1, 0, 0, 0, 1, 0], TOL);
    expect(quatAngle(q)).toBeCloseTo(120 * deg, 12);
    const phi = so3Log(new Float64Array(3), R);
    const k = (120 * deg) / Math.sqrt(3);
    expectClose(phi, [k, k, k], TOL);
  });

  it('case 3: Hamilton product, i j = k, q_z90 ⊗ q_x90 = (0.5,0.5,0.5,0.5)', () => {
    // Source: reference-checks.md sec 5.2 case 3 (the JPL product would give (0.5, 0.5, -0.5, 0.5))
    const out = new Float64Array(4);
    expectClose(quatMultiply(out, quatCreate(0, 1, 0, 0), quatCreate(0, 0, 1, 0)), [0, 0, 0, 1], TOL);
    const qz = quatCreate(Math.SQRT1_2, 0, 0, Math.SQRT1_2);
    const qx = quatCreate(Math.SQRT1_2, Math.SQRT1_2, 0, 0);
    quatMultiply(out, qz, qx);
    expectClose(out, [0.5, 0.5, 0.5, 0.5], TOL);
    expectClose(quatRotate(new Float64Array(3), out, v3(1, 0, 0)), [0, 1, 0], TOL);
  });

  it('case 4: ZYX yaw 30, pitch 20, roll 10 deg', () => {
    // Source: reference-checks.md sec 5.2 case 4 (values to 10 significant digits, so tolerance 1e-9 on those)
    const q = quatFromEulerZYX(new Float64Array(4), 30 * deg, 20 * deg, 10 * deg);
    expectClose(q, [0.9515485246, 0.0381345765, 0.1893078574, 0.2392983377], 1e-9);
    const R = matFromEulerZYX(new Float64Array(9), 30 * deg, 20 * deg, 10 * deg);
    expectClose(R, [0.813797681, -0.440969611, 0.378522306, 0.46984631, 0.882564119, 0.018028311,
      -0.342020143, 0.163175911, 0.925416578], 1e-9);
    expectClose(matFromQuat(new Float64Array(9), q), R, TOL);
    expect(R[0] + R[4] + R[8]).toBeCloseTo(2.621778379, 9);
    expect(so3Angle(R) / deg).toBeCloseTo(35.817101, 6);
    expectClose(so3Log(new Float64Array(3), R), [0.0775253, 0.3848516, 0.4864792], 1e-7);
    const e = eulerZYXFromMat(new Float64Array(3), R);
    expectClose(e, [30 * deg, 20 * deg, 10 * deg], TOL);
    expectClose(eulerZYXFromQuat(new Float64Array(3), q), [30 * deg, 20 * deg, 10 * deg], TOL);
  });

  it('case 5: 180 deg about y, the singular branch of the log', () => {
    // Source: reference-checks.md sec 5.2 case 5
    const q = quatCreate(0, 0, 1, 0);
    const R = matFromQuat(new Float64Array(9), q);
    expectClose(R, [-1, 0, 0, 0, 1, 0, 0, 0, -1], TOL);
    const phi = so3Log(new Float64Array(3), R);
    expect(Math.abs(phi[1])).toBeCloseTo(Math.PI, 12);
    expect(Math.abs(phi[0]) + Math.abs(phi[2])).toBeLessThan(TOL);
    const qphi = quatLog(new Float64Array(3), q);
    expect(Math.abs(qphi[1])).toBeCloseTo(Math.PI, 12);
  });

  it('case 6: gimbal lock round trips preserve R', () => {
    // Source: reference-checks.md sec 5.2 case 6 [CONSTRUCTED]
    for (const pitch of [90 * deg, -90 * deg]) {
      const R = matFromEulerZYX(new Float64Array(9), 40 * deg, pitch, 25 * deg);
      const e = eulerZYXFromMat(new Float64Array(3), R);
      const R2 = matFromEulerZYX(new Float64Array(9), e[0], e[1], e[2]);
      expectClose(R2, R, 1e-9);
    }
  });
});

describe('cross-check against three 0.187.0 on seeded random rotations', () => {
  const rand = seededRandom(20261202);
  const cases = Array.from({ length: 200 }, () => randomQuat(rand));

  it('matrix, product, vector rotation, Euler and angle agree with three', () => {
    const R = new Float64Array(9);
    const out = new Float64Array(4);
    const v = new Float64Array(3);
    for (let i = 0; i < cases.length; i++) {
      const a = cases[i];
      const b = cases[(i + 1) % cases.length];
      // matrix (three: makeRotationFromQuaternion, column-major)
      matFromQuat(R, a);
      expectClose(R, threeMat3(new Matrix4().makeRotationFromQuaternion(toThree(a))), TOL);
      // quaternion from matrix
      const tq = new Quaternion().setFromRotationMatrix(new Matrix4().makeRotationFromQuaternion(toThree(a)));
      expectSameQuat(quatFromMat(out, R), [tq.w, tq.x, tq.y, tq.z], TOL);
      // Hamilton product (three: a.multiply(b) = a ⊗ b)
      const tp = toThree(a).multiply(toThree(b));
      expectClose(quatMultiply(out, a, b), [tp.w, tp.x, tp.y, tp.z], TOL);
      // vector rotation
      const tv = new Vector3(0.3, -1.2, 2.5).applyQuaternion(toThree(a));
      expectClose(quatRotate(v, a, v3(0.3, -1.2, 2.5)), [tv.x, tv.y, tv.z], TOL);
      // ZYX Euler: three's Euler(roll, pitch, yaw, 'ZYX') is R_z R_y R_x
      const te = new Euler().setFromQuaternion(toThree(a), 'ZYX');
      expectClose(eulerZYXFromQuat(v, a), [te.z, te.y, te.x], 1e-10);
      const tq2 = new Quaternion().setFromEuler(new Euler(te.x, te.y, te.z, 'ZYX'));
      expectSameQuat(quatFromEulerZYX(out, te.z, te.y, te.x), [tq2.w, tq2.x, tq2.y, tq2.z], TOL);
      // angle between (three: angleTo)
      expect(quatAngleBetween(a, b)).toBeCloseTo(toThree(a).angleTo(toThree(b)), 10);
      const Rb = matFromQuat(new Float64Array(9), b);
      expect(so3AngleBetween(R, Rb)).toBeCloseTo(toThree(a).angleTo(toThree(b)), 10);
      // slerp (three: slerpQuaternions)
      const ts = new Quaternion().slerpQuaternions(toThree(a), toThree(b), 0.3);
      expectSameQuat(quatSlerp(out, a, b, 0.3), [ts.w, ts.x, ts.y, ts.z], 1e-10);
    }
  });

  it('exp matches three\'s axis-angle rotation', () => {
    const g = gaussian(rand);
    const R = new Float64Array(9);
    for (let i = 0; i < 100; i++) {
      const phi = v3(g(), g(), g());
      const theta = Math.hypot(phi[0], phi[1], phi[2]);
      const axis = new Vector3(phi[0] / theta, phi[1] / theta, phi[2] / theta);
      const tm = threeMat3(new Matrix4().makeRotationAxis(axis, theta));
      expectClose(so3Exp(R, phi), tm, TOL);
      const q = quatExp(new Float64Array(4), phi);
      const tq = new Quaternion().setFromAxisAngle(axis, theta);
      expectClose(q, [tq.w, tq.x, tq.y, tq.z], TOL);
    }
  });
});

describe('SO(3) identities over identity, tiny (1e-8), random and near-pi fixtures', () => {
  const rand = seededRandom(7);
  const g = gaussian(rand);
  const unit = (): Float64Array => { const a = v3(g(), g(), g()); const n = Math.hypot(a[0], a[1], a[2]); return v3(a[0] / n, a[1] / n, a[2] / n); };
  const scale = (a: Float64Array, s: number): Float64Array => v3(a[0] * s, a[1] * s, a[2] * s);
  const fixtures: [string, Float64Array][] = [
    ['identity', v3(0, 0, 0)],
    ['tiny 1e-8', scale(unit(), 1e-8)],
    ['small 1e-5 (series branch)', scale(unit(), 1e-5)],
    ['random', scale(unit(), 1.3)],
    ['random 2', scale(unit(), 2.7)],
    ['near pi (pi - 1e-6)', scale(unit(), Math.PI - 1e-6)],
    ['near pi (pi - 1e-3)', scale(unit(), Math.PI - 1e-3)],
    ['exactly pi', scale(unit(), Math.PI)],
  ];
  it.each(fixtures)('%s: log(exp(phi)) = phi, exp(log R) = R, R R^T = I, J_l J_l^-1 = I', (_name, phi) => {
    const R = so3Exp(new Float64Array(9), phi);
    expect(rotationDefect(R)).toBeLessThan(1e-14);
    const back = so3Log(new Float64Array(3), R) as Float64Array;
    const t = Math.hypot(phi[0], phi[1], phi[2]);
    if (Math.abs(t - Math.PI) < 1e-9) {
      // at exactly pi, phi and -phi are the same rotation
      const s = back[0] * phi[0] + back[1] * phi[1] + back[2] * phi[2] < 0 ? -1 : 1;
      expectClose(scale(back, s), phi, 1e-9);
    } else if (Math.abs(t - Math.PI) < 1e-5) {
      expectClose(back, phi, 1e-9); // the angle is ill-conditioned in R this close to pi (cond ~ 1/sin t)
    } else {
      expectClose(back, phi, TOL);
    }
    expectClose(so3Exp(new Float64Array(9), back), R, TOL);
    const Rt = new Float64Array(9);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) Rt[3 * j + i] = R[3 * i + j];
    expectClose(mat3Multiply(new Float64Array(9), R, Rt), mat3Create(), TOL);
    // quaternion path agrees
    const q = quatExp(new Float64Array(4), phi);
    expectClose(matFromQuat(new Float64Array(9), q), R, TOL);
    const qi = quatMultiply(new Float64Array(4), q, quatConjugate(new Float64Array(4), q));
    expectClose(qi, [1, 0, 0, 0], TOL);
    // J_l J_l^-1 = I (the inverse is finite up to, not at, 2 pi)
    const J = so3LeftJacobian(new Float64Array(9), phi);
    const Ji = so3LeftJacobianInverse(new Float64Array(9), phi);
    expectClose(mat3Multiply(new Float64Array(9), J, Ji), mat3Create(), 1e-11);
  });

  it('J_l is the derivative of exp: Exp(phi + d) ≈ Exp(J_l d) Exp(phi)', () => {
    // common practice: a finite-difference check of the Jacobian
    const phi = v3(0.4, -0.9, 1.1);
    const d = v3(1e-6, -2e-6, 1.5e-6);
    const lhs = so3Exp(new Float64Array(9), v3(phi[0] + d[0], phi[1] + d[1], phi[2] + d[2]));
    const J = so3LeftJacobian(new Float64Array(9), phi);
    const Jd = v3(J[0] * d[0] + J[1] * d[1] + J[2] * d[2], J[3] * d[0] + J[4] * d[1] + J[5] * d[2], J[6] * d[0] + J[7] * d[1] + J[8] * d[2]);
    const rhs = mat3Multiply(new Float64Array(9), so3Exp(new Float64Array(9), Jd), so3Exp(new Float64Array(9), phi));
    expectClose(lhs, rhs, 1e-11);
  });
});

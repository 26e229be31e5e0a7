import { describe, expect, it } from 'vitest';
import { Matrix, solve } from 'ml-matrix';
import { refineTdoa, tdoaFix, tdoaLinearFix, tdoaMinimalFix, referenceDifferences, type TdoaObservation } from '../../../extension/core/uwb/tdoaFix';
import { rangeFix, rangeLinearFix } from '../../../extension/core/uwb/rangeFix';
import { distance_m, type Vec3_m } from '../../../extension/core/uwb/vec3';
import { makeSeededRandom } from '../../../extension/core/stats/seededRandom';

// Source: reference-checks.md sec 6.2: sensors, c = 341 and emitter from the TDOAOnlyStaticLocEst.m docstring (NRL
// Tracker Component Library, [READ]); ranges, differences, roots COMPUTED there. Tolerance 1e-9 m noise-free.
const sensors: Vec3_m[] = [[9, 39, 100], [65, 10, -60], [64, 71, 43], [-128, 6, 12], [0, -20, 4]];
const truth: Vec3_m = [27, 0, -42];
const c = 341;
const dt_s = [-3.083106746732e-1, -9.262552169307e-2, 4.660545435737e-2, -2.680041177683e-1];

describe('TDOA fix, five-sensor example of reference-checks sec 6.2', () => {
  const d = sensors.slice(1).map((s) => distance_m(truth, s) - distance_m(truth, sensors[0]));
  it('the range differences match the published ones', () => {
    const published = [-105.133940064, -31.585302897, 15.892459936, -91.389404159];
    for (let k = 0; k < 4; k++) expect(Math.abs(d[k] - published[k])).toBeLessThan(1e-8);
    for (let k = 0; k < 4; k++) expect(Math.abs(dt_s[k] * c - published[k])).toBeLessThan(1e-8);
  });
  it('linear LS returns (27, 0, -42) and r1 = 148.354305634 to 1e-9', () => {
    // Published TDOAs (seconds) times c, as the docstring's call would pass them.
    const sol = tdoaLinearFix(sensors, dt_s.map((x) => x * c))!;
    for (let k = 0; k < 3; k++) expect(Math.abs(sol.p[k] - truth[k])).toBeLessThan(1e-8);
    const exact = tdoaLinearFix(sensors, d)!;
    for (let k = 0; k < 3; k++) expect(Math.abs(exact.p[k] - truth[k])).toBeLessThan(1e-9);
    expect(Math.abs(exact.rRef_m - 148.354305634)).toBeLessThan(1e-9);
  });
  it('minimal case S1..S4: roots 148.3543 and -266.0757, only the first physical', () => {
    const m = tdoaMinimalFix(sensors.slice(0, 4), d.slice(0, 3))!;
    expect(m.roots.length).toBe(2);
    expect(Math.abs(m.roots[0] - 148.3543)).toBeLessThan(1e-4);
    expect(Math.abs(m.roots[1] - -266.0757)).toBeLessThan(1e-4);
    expect(m.solutions.length).toBe(1);
    for (let k = 0; k < 3; k++) expect(Math.abs(m.solutions[0].p[k] - truth[k])).toBeLessThan(1e-9);
  });
  it('the full fix from pair measurements (any pairs) lands on the emitter', () => {
    const obs: TdoaObservation[] = [
      { i: 1, j: 2, d_m: distance_m(truth, sensors[2]) - distance_m(truth, sensors[1]) },
      { i: 2, j: 3, d_m: distance_m(truth, sensors[3]) - distance_m(truth, sensors[2]) },
      { i: 3, j: 4, d_m: distance_m(truth, sensors[4]) - distance_m(truth, sensors[3]) },
      { i: 4, j: 0, d_m: distance_m(truth, sensors[0]) - distance_m(truth, sensors[4]) },
    ];
    const star = referenceDifferences(obs)!;
    expect(star.anchors.length).toBe(5);
    const fix = tdoaFix(sensors, obs)!;
    expect(fix.method).toBe('linear');
    for (let k = 0; k < 3; k++) expect(Math.abs(fix.p[k] - truth[k])).toBeLessThan(1e-9);
    expect(fix.rms_m).toBeLessThan(1e-9);
  });
});

describe('linear LS against ml-matrix on a noisy case', () => {
  it('tdoaLinearFix equals the LS solution computed by ml-matrix', () => {
    const rng = makeSeededRandom(7);
    const anchors: Vec3_m[] = Array.from({ length: 8 }, () => [20 * rng.uniform(), 15 * rng.uniform(), 3 * rng.uniform()] as Vec3_m);
    const p: Vec3_m = [8, 6, 1.2];
    const dRef = anchors.slice(1).map((s) => distance_m(p, s) - distance_m(p, anchors[0]) + 0.05 * rng.normal());
    const s0 = anchors[0];
    const A = anchors.slice(1).map((s, k) => [2 * (s[0] - s0[0]), 2 * (s[1] - s0[1]), 2 * (s[2] - s0[2]), 2 * dRef[k]]);
    const b = anchors.slice(1).map((s, k) => (s[0] - s0[0]) ** 2 + (s[1] - s0[1]) ** 2 + (s[2] - s0[2]) ** 2 - dRef[k] ** 2);
    const ref = solve(new Matrix(A), Matrix.columnVector(b));
    const got = tdoaLinearFix(anchors, dRef)!;
    for (let k = 0; k < 3; k++) expect(Math.abs(got.p[k] - (ref.get(k, 0) + s0[k]))).toBeLessThan(1e-9);
    expect(Math.abs(got.rRef_m - ref.get(3, 0))).toBeLessThan(1e-9);
  });
  it('Gauss-Newton ends at a stationary point: J^T r = 0 (first-order optimality)', () => {
    const rng = makeSeededRandom(11);
    const anchors: Vec3_m[] = [[0, 0, 3], [20, 0, 2.5], [20, 15, 3], [0, 15, 0.5], [10, 7, 2.9], [5, 12, 0.3]];
    const p: Vec3_m = [6, 4, 1.1];
    const obs: TdoaObservation[] = [1, 2, 3, 4, 5].map((j) => ({ i: 0, j, d_m: distance_m(p, anchors[j]) - distance_m(p, anchors[0]) + 0.1 * rng.normal() }));
    const fit = refineTdoa(anchors, obs, [10, 7, 1])!;
    expect(fit.converged).toBe(true);
    const grad = [0, 0, 0];
    for (const o of obs) {
      const ri = distance_m(fit.p, anchors[o.i]);
      const rj = distance_m(fit.p, anchors[o.j]);
      const r = o.d_m - (rj - ri);
      for (let k = 0; k < 3; k++) grad[k] += r * ((fit.p[k] - anchors[o.j][k]) / rj - (fit.p[k] - anchors[o.i][k]) / ri);
    }
    for (let k = 0; k < 3; k++) expect(Math.abs(grad[k])).toBeLessThan(1e-9);
    expect(distance_m(fit.p, p)).toBeLessThan(1);
  });
});

describe('range fix', () => {
  const anchors: Vec3_m[] = [[0, 0, 3], [20, 0, 2.5], [20, 15, 3], [0, 15, 0.5], [10, 7, 2.9]];
  const p: Vec3_m = [6, 4, 1.1];
  it('noise-free ranges give the position to 1e-9 m (constructed)', () => {
    const r = anchors.map((s) => distance_m(p, s));
    const lin = rangeLinearFix(anchors, r)!;
    for (let k = 0; k < 3; k++) expect(Math.abs(lin[k] - p[k])).toBeLessThan(1e-9);
    const fix = rangeFix(anchors, anchors.map((_, a) => ({ anchor: a, r_m: r[a] })))!;
    for (let k = 0; k < 3; k++) expect(Math.abs(fix.p[k] - p[k])).toBeLessThan(1e-9);
  });
  it('needs four anchors', () => {
    const r = anchors.map((s) => distance_m(p, s));
    expect(rangeFix(anchors, [0, 1, 2].map((a) => ({ anchor: a, r_m: r[a] })))).toBeUndefined();
  });
});

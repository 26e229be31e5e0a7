import { describe, expect, it } from 'vitest';
import { Matrix, inverse } from 'ml-matrix';
import { dopFromLineOfSight, lineOfSightEnu, rangeDop, tdoaDop, toaOffsetDop } from '../../../extension/core/uwb/dop';
import type { Vec3_m } from '../../../extension/core/uwb/vec3';

const deg = Math.PI / 180;
const los = (pairs: [number, number][]): Vec3_m[] => pairs.map(([el, az]) => lineOfSightEnu(el * deg, az * deg));

// Source: reference-checks.md sec 6.1 (Kaplan and Hegarty, ch. 7 definitions; cases CONSTRUCTED + COMPUTED, tol 1e-12).
describe('GNSS-form DOP, reference-checks sec 6.1', () => {
  const elTetra = -Math.asin(1 / 3) / deg;
  const cases: { name: string; geometry: [number, number][]; expected: [number, number, number, number, number] }[] = [
    {
      name: 'regular tetrahedron',
      geometry: [[90, 0], [elTetra, 0], [elTetra, 120], [elTetra, 240]],
      expected: [Math.sqrt(10) / 2, 1.5, Math.sqrt(1.5), Math.sqrt(0.75), 0.5],
    },
    {
      name: 'zenith + 3 on the horizon',
      geometry: [[90, 0], [0, 0], [0, 120], [0, 240]],
      expected: [Math.sqrt(3), Math.sqrt(8 / 3), 2 / Math.sqrt(3), 2 / Math.sqrt(3), 1 / Math.sqrt(3)],
    },
    {
      // Table gives 3.073181, 2.666667, 1.333333, 2.309401, 1.527525; the closed forms below (our algebra) match them.
      name: 'zenith + 3 at elevation 30',
      geometry: [[90, 0], [30, 0], [30, 120], [30, 240]],
      expected: [Math.sqrt(85 / 9), 8 / 3, 4 / 3, 4 / Math.sqrt(3), Math.sqrt(7 / 3)],
    },
    {
      name: 'zenith + 4 on the horizon',
      geometry: [[90, 0], [0, 0], [0, 90], [0, 180], [0, 270]],
      expected: [Math.sqrt(10) / 2, 1.5, 1.0, Math.sqrt(1.25), 0.5],
    },
  ];
  for (const c of cases) {
    it(c.name, () => {
      const d = dopFromLineOfSight(los(c.geometry));
      expect(d).toBeDefined();
      const got = [d!.gdop!, d!.pdop, d!.hdop, d!.vdop, d!.tdop!];
      for (let k = 0; k < 5; k++) expect(Math.abs(got[k] - c.expected[k])).toBeLessThan(1e-12);
    });
  }
  it('the 6-decimal table row for elevation 30 (tol 5e-7)', () => {
    const d = dopFromLineOfSight(los([[90, 0], [30, 0], [30, 120], [30, 240]]))!;
    const got = [d.gdop!, d.pdop, d.hdop, d.vdop, d.tdop!];
    const table = [3.073181, 2.666667, 1.333333, 2.309401, 1.527525];
    for (let k = 0; k < 5; k++) expect(Math.abs(got[k] - table[k])).toBeLessThan(5e-7);
  });
  it('is undefined with three directions or coplanar-degenerate geometry', () => {
    expect(dopFromLineOfSight(los([[90, 0], [0, 0], [0, 120]]))).toBeUndefined();
    // Four directions on one cone around the zenith (all the same elevation) with the clock: singular.
    expect(dopFromLineOfSight(los([[30, 0], [30, 90], [30, 180], [30, 270]]))).toBeUndefined();
  });
});

// Source: reference-checks.md sec 6.2, sensors and emitter of the TDOAOnlyStaticLocEst.m docstring (NRL Tracker
// Component Library); DOP values COMPUTED there: 2.3411116 correlated, 2.2106499 ignoring the correlation.
describe('TDOA DOP with correlated differences, reference-checks sec 6.2', () => {
  const sensors: Vec3_m[] = [[9, 39, 100], [65, 10, -60], [64, 71, 43], [-128, 6, 12], [0, -20, 4]];
  const t: Vec3_m = [27, 0, -42];
  it('correlated model 2.3411116, uncorrelated 2.2106499', () => {
    expect(Math.abs(tdoaDop(sensors, t)!.pdop - 2.3411116)).toBeLessThan(1e-7);
    expect(Math.abs(tdoaDop(sensors, t, { correlated: false })!.pdop - 2.2106499)).toBeLessThan(1e-7);
  });
  it('equals the TOA-with-offset PDOP and does not depend on the reference (correlated only)', () => {
    const toa = toaOffsetDop(sensors, t)!.pdop;
    for (let ref = 0; ref < sensors.length; ref++) {
      expect(Math.abs(tdoaDop(sensors, t, { reference: ref })!.pdop - toa)).toBeLessThan(1e-12);
    }
    const uncorrelated = sensors.map((_, ref) => tdoaDop(sensors, t, { reference: ref, correlated: false })!.pdop);
    expect(Math.max(...uncorrelated) - Math.min(...uncorrelated)).toBeGreaterThan(1e-3);
  });
  it('agrees with an explicit (H^T C^-1 H)^-1 computed by ml-matrix', () => {
    // Independent reference: the full m x m covariance C = I + 1 1^T inverted by ml-matrix (general-purpose library).
    const u = sensors.map((s) => {
      const r = Math.hypot(t[0] - s[0], t[1] - s[1], t[2] - s[2]);
      return [(t[0] - s[0]) / r, (t[1] - s[1]) / r, (t[2] - s[2]) / r];
    });
    const H = new Matrix(u.slice(1).map((ui) => [ui[0] - u[0][0], ui[1] - u[0][1], ui[2] - u[0][2]]));
    const C = Matrix.eye(4).add(Matrix.ones(4, 4));
    const Q = inverse(H.transpose().mmul(inverse(C)).mmul(H));
    const expected = Math.sqrt(Q.get(0, 0) + Q.get(1, 1) + Q.get(2, 2));
    expect(Math.abs(tdoaDop(sensors, t)!.pdop - expected)).toBeLessThan(1e-10);
  });
  it('is undefined with fewer than 4 anchors', () => {
    expect(tdoaDop(sensors.slice(0, 3), t)).toBeUndefined();
  });
});

describe('two-way range DOP', () => {
  it('three orthogonal unit directions give PDOP sqrt(3) (constructed)', () => {
    // Anchors along the three axes from the origin: H = I, (H^T H)^-1 = I.
    expect(Math.abs(rangeDop([[5, 0, 0], [0, 7, 0], [0, 0, 2]], [0, 0, 0])!.pdop - Math.sqrt(3))).toBeLessThan(1e-12);
  });
  it('collinear anchors are undefined', () => {
    expect(rangeDop([[1, 0, 0], [2, 0, 0], [3, 0, 0]], [0, 0, 0])).toBeUndefined();
  });
});

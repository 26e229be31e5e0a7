/** Geodetic reference: proj4's ECEF against the closed-form WGS84 formulas, then the local ENU/NED rotation. */
import { describe, expect, it } from 'vitest';
import { geodeticToEcef, geodeticToLocal } from '../../../extension/core/errors/geodetic';
import { analyzeErrors } from '../../../extension/core/errors/index';
import { resolveSettings } from '../../../extension/core/settings';
import { navLog, stateStream } from './fixtures';

// WGS84 constants and the geodetic -> ECEF closed form (common practice; e.g. any geodesy text)
const A = 6378137, F = 1 / 298.257223563, E2 = F * (2 - F);
function ecef(latDeg: number, lonDeg: number, h: number): number[] {
  const la = (latDeg * Math.PI) / 180, lo = (lonDeg * Math.PI) / 180;
  const N = A / Math.sqrt(1 - E2 * Math.sin(la) ** 2);
  return [(N + h) * Math.cos(la) * Math.cos(lo), (N + h) * Math.cos(la) * Math.sin(lo), (N * (1 - E2) + h) * Math.sin(la)];
}

describe('geodetic conversion', () => {
  it('proj4 geocent agrees with the closed form to 1e-6 m', () => {
    for (const [la, lo, h] of [[37.55, 126.84, 50], [-33.9, 18.4, 1200], [0, 0, 0], [89.9, -45, -20]]) {
      const p = geodeticToEcef(la, lo, h);
      const q = ecef(la, lo, h);
      for (let i = 0; i < 3; i++) expect(Math.abs(p[i] - q[i])).toBeLessThan(1e-6);
    }
  });

  it('ENU and NED about the first fix: up, north and east offsets', () => {
    const la0 = 37.55, lo0 = 126.84;
    const s = Math.sin((la0 * Math.PI) / 180);
    const M = (A * (1 - E2)) / (1 - E2 * s * s) ** 1.5; // meridian radius of curvature
    const Nr = A / Math.sqrt(1 - E2 * s * s); // prime vertical radius
    const dLat = 100 / M * (180 / Math.PI), dLon = 100 / (Nr * Math.cos((la0 * Math.PI) / 180)) * (180 / Math.PI);
    const lat = Float64Array.of(NaN, la0, la0, la0 + dLat, la0);
    const lon = Float64Array.of(lo0, lo0, lo0, lo0, lo0 + dLon);
    const h = Float64Array.of(0, 10, 25, 10, 10);
    const enu: [Float64Array, Float64Array, Float64Array] = [new Float64Array(5), new Float64Array(5), new Float64Array(5)];
    const o = geodeticToLocal(lat, lon, h, 5, 'ENU', enu);
    expect(o).toEqual({ lat_deg: la0, lon_deg: lo0, h_m: 10 }); // first complete fix
    expect(Number.isNaN(enu[0][0])).toBe(true);
    for (let c = 0; c < 3; c++) expect(Math.abs(enu[c][1])).toBeLessThan(1e-9);
    expect(enu[2][2]).toBeCloseTo(15, 6);
    expect(Math.abs(enu[1][3] - 100)).toBeLessThan(1e-3); // north, curvature terms ~ 1e-3 m over 100 m
    expect(Math.abs(enu[0][3])).toBeLessThan(1e-6);
    expect(Math.abs(enu[0][4] - 100)).toBeLessThan(1e-3); // east
    const ned: [Float64Array, Float64Array, Float64Array] = [new Float64Array(5), new Float64Array(5), new Float64Array(5)];
    geodeticToLocal(lat, lon, h, 5, 'NED', ned);
    expect(ned[0][3]).toBeCloseTo(enu[1][3], 9);
    expect(ned[1][4]).toBeCloseTo(enu[0][4], 9);
    expect(ned[2][2]).toBeCloseTo(-15, 6);
  });

  it('a geodetic reference is compared in the log frame; the trajectory plot is east vs north', () => {
    const la0 = 37.55, lo0 = 126.84;
    const t = Float64Array.from({ length: 50 }, (_, i) => i * 0.2);
    const lat = t.map((s) => la0 + s * 1e-5), lon = t.map((s) => lo0 + s * 2e-5), h = t.map(() => 30);
    const ref = stateStream(t, { lat, lon, h }, 'gnss.csv');
    const enu: [Float64Array, Float64Array, Float64Array] = [new Float64Array(50), new Float64Array(50), new Float64Array(50)];
    for (const frame of ['ENU', 'NED'] as const) {
      geodeticToLocal(lat, lon, h, 50, frame, enu);
      const est = stateStream(t, { p_x: enu[0].map((v) => v + 0.3), p_y: enu[1].slice(), p_z: enu[2].slice() });
      const out = analyzeErrors(navLog(est, ref, { frame }), resolveSettings({}));
      expect(out.block?.origin).toEqual({ lat: la0, lon: lo0, h: 30 });
      expect(out.block?.position?.meanPerAxis?.[0]).toBeCloseTo(-0.3, 9);
      expect(out.block?.position?.rmse).toBeCloseTo(0.3, 9);
      const tr = out.series.find((s) => s.key === 'trajectory/estimate');
      if (!tr) throw new Error('no trajectory');
      // x = east, y = north whatever the frame
      const east = frame === 'ENU' ? enu[0] : enu[1];
      expect(tr.x[10]).toBeCloseTo(east[10] + (frame === 'ENU' ? 0.3 : 0), 9);
    }
  });
});

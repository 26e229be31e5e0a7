/**
 * Geodetic (WGS84 latitude, longitude in degrees, ellipsoidal height in metres) to a local Cartesian frame.
 *
 * The datum conversion to Earth-centred Earth-fixed (ECEF) coordinates is proj4's (`+proj=geocent`), a kept
 * geodesy library; only the rotation into the local tangent frame is written here:
 *   ENU: e = (-sin lon, cos lon, 0), n = (-sin lat cos lon, -sin lat sin lon, cos lat),
 *        u = (cos lat cos lon, cos lat sin lon, sin lat) (rows of the ECEF->ENU rotation, common practice);
 *   NED: (n, e, -u).
 * The origin is the first fix with all three values finite, unless one is given.
 */
import proj4 from 'proj4';

const WGS84_GEODETIC = 'EPSG:4326';
const WGS84_ECEF = '+proj=geocent +datum=WGS84 +units=m +no_defs';

/** Local frame of the converted coordinates. */
export type LocalFrame = 'ENU' | 'NED';

/** Geodetic origin of a local frame. */
export interface GeodeticOrigin {
  lat_deg: number;
  lon_deg: number;
  h_m: number;
}

/** ECEF coordinates (m) of a WGS84 geodetic point, through proj4. */
export function geodeticToEcef(lat_deg: number, lon_deg: number, h_m: number): [number, number, number] {
  const p = proj4(WGS84_GEODETIC, WGS84_ECEF, [lon_deg, lat_deg, h_m]);
  return [p[0], p[1], p[2] ?? NaN];
}

/**
 * Convert geodetic columns to local x, y, z columns (ENU: east, north, up; NED: north, east, down) about
 * `origin` (default: the first complete fix). Rows with a missing value give NaN. Returns the origin used
 * (undefined when no row is complete).
 */
export function geodeticToLocal(
  lat_deg: Float64Array, lon_deg: Float64Array, h_m: Float64Array | undefined, length: number, frame: LocalFrame,
  out: [Float64Array, Float64Array, Float64Array], origin?: GeodeticOrigin,
): GeodeticOrigin | undefined {
  let o = origin;
  if (!o) {
    for (let i = 0; i < length; i++) {
      const h = h_m ? h_m[i] : 0;
      if (Number.isFinite(lat_deg[i]) && Number.isFinite(lon_deg[i]) && Number.isFinite(h)) {
        o = { lat_deg: lat_deg[i], lon_deg: lon_deg[i], h_m: h };
        break;
      }
    }
  }
  if (!o) { for (const c of out) c.fill(NaN); return undefined; }
  const [x0, y0, z0] = geodeticToEcef(o.lat_deg, o.lon_deg, o.h_m);
  const la = (o.lat_deg * Math.PI) / 180, lo = (o.lon_deg * Math.PI) / 180;
  const sla = Math.sin(la), cla = Math.cos(la), slo = Math.sin(lo), clo = Math.cos(lo);
  for (let i = 0; i < length; i++) {
    const h = h_m ? h_m[i] : 0;
    if (!(Number.isFinite(lat_deg[i]) && Number.isFinite(lon_deg[i]) && Number.isFinite(h))) {
      out[0][i] = out[1][i] = out[2][i] = NaN;
      continue;
    }
    const [x, y, z] = geodeticToEcef(lat_deg[i], lon_deg[i], h);
    const dx = x - x0, dy = y - y0, dz = z - z0;
    const e = -slo * dx + clo * dy;
    const n = -sla * clo * dx - sla * slo * dy + cla * dz;
    const u = cla * clo * dx + cla * slo * dy + sla * dz;
    if (frame === 'ENU') { out[0][i] = e; out[1][i] = n; out[2][i] = u; } else { out[0][i] = n; out[1][i] = e; out[2][i] = -u; }
  }
  return o;
}

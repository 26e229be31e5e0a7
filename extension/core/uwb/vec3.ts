/**
 * Points and small helpers shared by the UWB modules.
 *
 * Conventions (stated once, here): positions are metres in the navigation frame of the log (ENU or NED), stored as
 * `[x, y, z]` tuples; the third axis is the vertical one (up in ENU, down in NED), which only matters for the
 * horizontal/vertical split of DOP. Anchor indices are positions in the anchor array a function is given.
 */

/** A point or vector in metres, navigation frame. */
export type Vec3_m = readonly [number, number, number];

/** Euclidean distance between two points, metres. */
export function distance_m(a: Vec3_m, b: Vec3_m): number {
  const dx = a[0] - b[0];
  const dy = a[1] - b[1];
  const dz = a[2] - b[2];
  return Math.sqrt(dx * dx + dy * dy + dz * dz);
}

/** True when all three coordinates are finite numbers. */
export function isFiniteVec3(p: Vec3_m | undefined): p is Vec3_m {
  return p !== undefined && Number.isFinite(p[0]) && Number.isFinite(p[1]) && Number.isFinite(p[2]);
}

/** Length of (x, y, z); plain sqrt of the sum of squares (Math.hypot is several times slower in V8 and the values here cannot overflow). */
export function norm3(x: number, y: number, z: number): number {
  return Math.sqrt(x * x + y * y + z * z);
}

/**
 * Units a mapping file may name, and their factor to the SI unit the model stores (seconds, metres, radians,
 * rad/s, m/s^2). Standard gravity 9.80665 m/s^2 (the conventional value, common practice) converts g and mg.
 */

/** Units accepted in a mapping file column (the JSON schema lists the same set). */
export const KNOWN_UNITS = ['s', 'ms', 'us', 'ns', 'rad', 'deg', 'rad/s', 'deg/s', 'm/s^2', 'g', 'mg', 'm', 'cm', 'mm',
  'km', 'm/s', 'km/h', '1'] as const;

/** A unit name accepted in a mapping file. */
export type UnitName = (typeof KNOWN_UNITS)[number];

/** Standard gravity, m/s^2. */
export const STANDARD_GRAVITY_MPS2 = 9.80665;

const FACTOR: Record<UnitName, number> = {
  s: 1, ms: 1e-3, us: 1e-6, ns: 1e-9,
  rad: 1, deg: Math.PI / 180, 'rad/s': 1, 'deg/s': Math.PI / 180,
  'm/s^2': 1, g: STANDARD_GRAVITY_MPS2, mg: STANDARD_GRAVITY_MPS2 * 1e-3,
  m: 1, cm: 1e-2, mm: 1e-3, km: 1e3, 'm/s': 1, 'km/h': 1 / 3.6, '1': 1,
};

/** Factor that converts a value in `unit` to the SI unit; undefined for an unknown unit. */
export function unitFactor(unit: string): number | undefined {
  return (FACTOR as Record<string, number>)[unit];
}

/** Factor of a time-unit suffix (`s`, `ms`, `us`, `ns`) to seconds. */
export function timeSuffixFactor(suffix: string): number {
  switch (suffix) {
    case 'ms': return 1e-3;
    case 'us': return 1e-6;
    case 'ns': return 1e-9;
    default: return 1;
  }
}

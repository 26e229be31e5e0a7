/**
 * Every datasheet-unit conversion of the IMU analysis, in one place.
 *
 * Conventions (stated once, here):
 * - SI inside the tool. Gyro quantities in rad/s; accelerometer quantities in m/s^2.
 * - A noise density (white-noise coefficient N) is in "per sqrt(Hz)": rad/s/sqrt(Hz) (= rad/sqrt(s)) and
 *   m/s^2/sqrt(Hz) (= m/s/sqrt(s)). N equals the Allan deviation at tau = 1 s.
 * - A rate random walk K is in "per sqrt(s)": rad/s/sqrt(s) (= rad/s^2/sqrt(Hz)) and m/s^2/sqrt(s)
 *   (= m/s^3/sqrt(Hz)). K equals the Allan deviation at tau = 3 s on the slope +1/2 line.
 * - A bias or bias instability B is a plain rate or acceleration (rad/s, m/s^2).
 * - g is standard gravity, 9.80665 m/s^2 (the conventional value, ISO 80000-3; common practice for "g" in
 *   datasheets).
 * - 1 h = 3600 s, so sqrt(h) = 60 sqrt(s): an ARW of 1 deg/sqrt(h) is (pi/180)/60 rad/sqrt(s), and a noise density of
 *   1 deg/s/sqrt(Hz) is 60 deg/sqrt(h) (reference-checks.md sec. 3.1, sec. 7.2).
 *
 * Units are written in plain ASCII as datasheets print them, e.g. `deg/h`, `deg/sqrt(h)`, `deg/s/sqrt(Hz)`, `ug`,
 * `mg`, `m/s/sqrt(h)`, `ug/sqrt(Hz)`, `deg/h/sqrt(h)`. `normalizeUnit` also accepts `°`, `µ`/`μ`, `√h`, `rt-Hz`,
 * `hr` and spaces.
 */

/** Degrees to radians. */
export const RAD_PER_DEG = Math.PI / 180;
/** Standard gravity, m/s^2 (conventional value). */
export const STANDARD_GRAVITY_MPS2 = 9.80665;
/** Seconds per hour. */
const S_PER_H = 3600;
/** sqrt(seconds per hour). */
const SQRT_S_PER_SQRT_H = 60;

/** The physical kind of an IMU figure; each kind has one SI unit. */
export type QuantityKind =
  | 'rate' // rad/s: gyro bias, gyro bias instability
  | 'rateDensity' // rad/s/sqrt(Hz): gyro white noise N (angle random walk)
  | 'rateRandomWalk' // rad/s/sqrt(s): gyro rate random walk K
  | 'accel' // m/s^2: accelerometer bias, bias instability
  | 'accelDensity' // m/s^2/sqrt(Hz): accelerometer white noise N (velocity random walk)
  | 'accelRandomWalk'; // m/s^2/sqrt(s): accelerometer bias random walk K

/** SI unit of each kind, as printed in the report and docs. */
export const SI_UNIT: Record<QuantityKind, string> = {
  rate: 'rad/s',
  rateDensity: 'rad/s/sqrt(Hz)',
  rateRandomWalk: 'rad/s/sqrt(s)',
  accel: 'm/s^2',
  accelDensity: 'm/s^2/sqrt(Hz)',
  accelRandomWalk: 'm/s^2/sqrt(s)',
};

/** The datasheet unit usually quoted for each kind (used for the report's datasheet-unit copies). */
export const DATASHEET_UNIT: Record<QuantityKind, string> = {
  rate: 'deg/h',
  rateDensity: 'deg/sqrt(h)',
  rateRandomWalk: 'deg/h/sqrt(h)',
  accel: 'ug',
  accelDensity: 'm/s/sqrt(h)',
  accelRandomWalk: 'ug/sqrt(h)',
};

const UG = 1e-6 * STANDARD_GRAVITY_MPS2;
const MG = 1e-3 * STANDARD_GRAVITY_MPS2;

/**
 * The conversion table: SI value = datasheet value * factor. Every unit the tool understands is a row here.
 * Each factor is derived in its comment.
 */
const UNITS: Record<string, { kind: QuantityKind; factor: number }> = {
  // rate (gyro bias, bias instability) -> rad/s
  'rad/s': { kind: 'rate', factor: 1 },
  'rad/h': { kind: 'rate', factor: 1 / S_PER_H },
  'deg/s': { kind: 'rate', factor: RAD_PER_DEG },
  'deg/h': { kind: 'rate', factor: RAD_PER_DEG / S_PER_H },
  'mdeg/s': { kind: 'rate', factor: 1e-3 * RAD_PER_DEG },
  // rate density (gyro N, ARW) -> rad/s/sqrt(Hz) = rad/sqrt(s)
  'rad/s/sqrt(hz)': { kind: 'rateDensity', factor: 1 },
  'rad/sqrt(s)': { kind: 'rateDensity', factor: 1 },
  'rad/sqrt(h)': { kind: 'rateDensity', factor: 1 / SQRT_S_PER_SQRT_H },
  'deg/s/sqrt(hz)': { kind: 'rateDensity', factor: RAD_PER_DEG },
  'mdeg/s/sqrt(hz)': { kind: 'rateDensity', factor: 1e-3 * RAD_PER_DEG },
  'deg/sqrt(s)': { kind: 'rateDensity', factor: RAD_PER_DEG },
  // 1 deg/sqrt(h) = (pi/180) rad / (60 sqrt(s))
  'deg/sqrt(h)': { kind: 'rateDensity', factor: RAD_PER_DEG / SQRT_S_PER_SQRT_H },
  // 1 deg/h/sqrt(Hz) = (pi/180)/3600 rad/s/sqrt(Hz)
  'deg/h/sqrt(hz)': { kind: 'rateDensity', factor: RAD_PER_DEG / S_PER_H },
  // rate random walk (gyro K) -> rad/s/sqrt(s) = rad/s^2/sqrt(Hz)
  'rad/s/sqrt(s)': { kind: 'rateRandomWalk', factor: 1 },
  'rad/s^2/sqrt(hz)': { kind: 'rateRandomWalk', factor: 1 },
  'deg/s/sqrt(s)': { kind: 'rateRandomWalk', factor: RAD_PER_DEG },
  'deg/s^2/sqrt(hz)': { kind: 'rateRandomWalk', factor: RAD_PER_DEG },
  // 1 deg/s/sqrt(h) = (pi/180) rad/s / (60 sqrt(s))
  'deg/s/sqrt(h)': { kind: 'rateRandomWalk', factor: RAD_PER_DEG / SQRT_S_PER_SQRT_H },
  // 1 deg/h/sqrt(h) = (pi/180)/3600 rad/s / (60 sqrt(s))
  'deg/h/sqrt(h)': { kind: 'rateRandomWalk', factor: RAD_PER_DEG / S_PER_H / SQRT_S_PER_SQRT_H },
  // 1 deg/h^(3/2) is the same unit as deg/h/sqrt(h)
  'deg/h^1.5': { kind: 'rateRandomWalk', factor: RAD_PER_DEG / S_PER_H / SQRT_S_PER_SQRT_H },
  // accel (bias, bias instability) -> m/s^2
  'm/s^2': { kind: 'accel', factor: 1 },
  g: { kind: 'accel', factor: STANDARD_GRAVITY_MPS2 },
  mg: { kind: 'accel', factor: MG },
  ug: { kind: 'accel', factor: UG },
  // accel density (N, VRW) -> m/s^2/sqrt(Hz) = m/s/sqrt(s)
  'm/s^2/sqrt(hz)': { kind: 'accelDensity', factor: 1 },
  'm/s/sqrt(s)': { kind: 'accelDensity', factor: 1 },
  // 1 m/s/sqrt(h) = 1 m/s / (60 sqrt(s))
  'm/s/sqrt(h)': { kind: 'accelDensity', factor: 1 / SQRT_S_PER_SQRT_H },
  'ug/sqrt(hz)': { kind: 'accelDensity', factor: UG },
  'mg/sqrt(hz)': { kind: 'accelDensity', factor: MG },
  'g/sqrt(hz)': { kind: 'accelDensity', factor: STANDARD_GRAVITY_MPS2 },
  // accel random walk (K) -> m/s^2/sqrt(s) = m/s^3/sqrt(Hz)
  'm/s^2/sqrt(s)': { kind: 'accelRandomWalk', factor: 1 },
  'm/s^3/sqrt(hz)': { kind: 'accelRandomWalk', factor: 1 },
  // 1 m/s^2/sqrt(h) = 1 m/s^2 / (60 sqrt(s))
  'm/s^2/sqrt(h)': { kind: 'accelRandomWalk', factor: 1 / SQRT_S_PER_SQRT_H },
  // 1 m/s/h/sqrt(h) = 1 m/s / (3600 s * 60 sqrt(s))
  'm/s/h/sqrt(h)': { kind: 'accelRandomWalk', factor: 1 / S_PER_H / SQRT_S_PER_SQRT_H },
  'm/s/h^1.5': { kind: 'accelRandomWalk', factor: 1 / S_PER_H / SQRT_S_PER_SQRT_H },
  'ug/sqrt(s)': { kind: 'accelRandomWalk', factor: UG },
  'ug/sqrt(h)': { kind: 'accelRandomWalk', factor: UG / SQRT_S_PER_SQRT_H },
  'mg/sqrt(h)': { kind: 'accelRandomWalk', factor: MG / SQRT_S_PER_SQRT_H },
};

/**
 * Bring a unit string to the table's spelling: lower case, no spaces, `°` -> `deg`, `µ`/`μ` -> `u`, `√x` and
 * `rt-x` -> `sqrt(x)`, `hr` -> `h`, `dps` -> `deg/s`, `sec` -> `s`, `²` -> `^2`, `/rtHz` -> `/sqrt(Hz)`.
 */
export function normalizeUnit(unit: string): string {
  let u = unit.trim().toLowerCase().replace(/\s+/g, '');
  u = u.replace(/°/g, 'deg').replace(/[µμ]/g, 'u').replace(/²/g, '^2').replace(/³/g, '^3');
  u = u.replace(/dps/g, 'deg/s');
  u = u.replace(/hours?|hrs?/g, 'h').replace(/secs?/g, 's');
  u = u.replace(/√\(?([a-z]+)\)?/g, 'sqrt($1)');
  u = u.replace(/(?:rt-?|root-?)(hz|h|s)\b/g, 'sqrt($1)');
  u = u.replace(/sqrt([a-z]+)/g, 'sqrt($1)');
  u = u.replace(/sqrt\(hz\)/g, 'sqrt(hz)');
  u = u.replace(/m\/s2/g, 'm/s^2').replace(/m\/s3/g, 'm/s^3');
  return u;
}

/** True when `unit` (any accepted spelling) is a known unit of `kind`. */
export function isUnitOf(unit: string, kind: QuantityKind): boolean {
  const row = UNITS[normalizeUnit(unit)];
  return row !== undefined && row.kind === kind;
}

/** Kind of a unit, or undefined when the unit is not known. */
export function unitKind(unit: string): QuantityKind | undefined {
  return UNITS[normalizeUnit(unit)]?.kind;
}

/**
 * Convert a datasheet value to SI. Returns undefined when the unit is unknown or not of the expected kind
 * (the caller reports where).
 * @param value the number as printed
 * @param unit its unit (any spelling `normalizeUnit` accepts)
 * @param kind the kind the caller expects; when given, a unit of another kind is refused
 */
export function toSI(value: number, unit: string, kind?: QuantityKind): number | undefined {
  const row = UNITS[normalizeUnit(unit)];
  if (!row || (kind !== undefined && row.kind !== kind)) return undefined;
  return value * row.factor;
}

/**
 * Convert an SI value to a datasheet unit. Returns undefined when the unit is unknown or not of the expected kind.
 * @param value_SI the value in the SI unit of its kind
 * @param unit the target unit
 * @param kind the kind the caller holds; when given, a unit of another kind is refused
 */
export function fromSI(value_SI: number, unit: string, kind?: QuantityKind): number | undefined {
  const row = UNITS[normalizeUnit(unit)];
  if (!row || (kind !== undefined && row.kind !== kind)) return undefined;
  return value_SI / row.factor;
}

/**
 * Parse a datasheet figure written as `"<number> <unit>"` (e.g. `"10 deg/h"`, `"0.005 °/s/√Hz"`, `"400 ug/sqrt(Hz)"`)
 * into SI. A bare number is taken as already SI. Returns a message instead of a value when it cannot.
 */
export function parseFigure(text: string | number, kind: QuantityKind): { value: number } | { error: string } {
  if (typeof text === 'number') {
    return Number.isFinite(text) && text >= 0 ? { value: text } : { error: `${text} is not a finite non-negative number` };
  }
  const m = /^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*)$/.exec(text);
  if (!m) return { error: `"${text}" does not start with a number` };
  const value = Number(m[1]);
  if (!(value >= 0) || !Number.isFinite(value)) return { error: `"${text}": the value must be finite and non-negative` };
  const unit = m[2].trim();
  if (unit === '') return { value };
  const si = toSI(value, unit, kind);
  if (si === undefined) {
    const k = unitKind(unit);
    return {
      error: k
        ? `"${text}": unit "${unit}" is a ${k} unit, expected a ${kind} unit such as ${DATASHEET_UNIT[kind]} or ${SI_UNIT[kind]}`
        : `"${text}": unknown unit "${unit}" (expected a ${kind} unit such as ${DATASHEET_UNIT[kind]} or ${SI_UNIT[kind]})`,
    };
  }
  return { value: si };
}

/** Every unit spelling the table holds, grouped by kind (for docs and error messages). */
export function knownUnits(): Record<QuantityKind, string[]> {
  const out: Record<QuantityKind, string[]> = {
    rate: [], rateDensity: [], rateRandomWalk: [], accel: [], accelDensity: [], accelRandomWalk: [],
  };
  for (const [u, row] of Object.entries(UNITS)) out[row.kind].push(u);
  return out;
}

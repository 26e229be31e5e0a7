/**
 * IMU specification presets (consumer, industrial, tactical grade) and the resolution of the specification used by
 * the bias checks: settings override > mapping file > preset.
 *
 * Each preset value is written in the datasheet unit it was published in and converted to SI through units.ts.
 * Every value names its source. Where no grade-typical figure is published (the rate random walk K almost never is),
 * the value is marked `common practice`: an order-of-magnitude figure of the trade, not a citation.
 * Sources are those collected in reference-checks.md sec. 7.2 (tags [READ] there).
 */
import type { ImuSpec, ImuSpecRaw, ImuSpecValue } from '../model';
import { parseFigure, type QuantityKind } from './units';

/** The six figures of an IMU specification (SI field names of `ImuSpec`). */
export type ImuSpecField =
  | 'gyroNoiseDensity'
  | 'gyroBiasInstability'
  | 'gyroRateRandomWalk'
  | 'accNoiseDensity'
  | 'accBiasInstability'
  | 'accRateRandomWalk';

/** Every field with its physical kind (for unit conversion). */
export const SPEC_FIELDS: Record<ImuSpecField, QuantityKind> = {
  gyroNoiseDensity: 'rateDensity',
  gyroBiasInstability: 'rate',
  gyroRateRandomWalk: 'rateRandomWalk',
  accNoiseDensity: 'accelDensity',
  accBiasInstability: 'accel',
  accRateRandomWalk: 'accelRandomWalk',
};

/** One preset figure: the value as published, its unit, and where it comes from. */
export interface PresetFigure {
  value: number;
  unit: string;
  source: string;
  /** True when no published grade figure exists and the value is the trade's usual order of magnitude. */
  commonPractice: boolean;
}

/** A named preset: one figure per field. */
export interface ImuPreset {
  name: string;
  description: string;
  figures: Record<ImuSpecField, PresetFigure>;
}

const COMMON = 'common practice (order of magnitude for the grade; no published grade figure)';
const MPU6000 = 'TDK/InvenSense MPU-6000/6050 datasheet PS-MPU-6000A rev 3.4, sec. 6.1-6.2 (reference-checks.md sec. 7.2)';
const ADIS16470 = 'ADI ADIS16470 datasheet rev C, front page (reference-checks.md sec. 7.2)';
const MTI1 = 'Xsens MTi-1 figures as tabulated in doi 10.2478/tar-2023-0022 (secondary source; reference-checks.md sec. 7.2)';
const ADIS16495 = 'ADI ADIS16495-1 datasheet rev C, front page (reference-checks.md sec. 7.2)';

/** The shipped presets. */
export const IMU_PRESETS: Record<string, ImuPreset> = {
  consumer: {
    name: 'consumer',
    description: 'consumer MEMS (MPU-6050 class)',
    figures: {
      gyroNoiseDensity: { value: 0.005, unit: 'deg/s/sqrt(Hz)', source: MPU6000, commonPractice: false },
      // The MPU-6000/6050 datasheet has no bias-instability figure; 5-20 deg/h is the usual consumer range
      // (reference-checks.md sec. 7.2 "suggested defaults"); the upper end keeps false drift alarms rare.
      gyroBiasInstability: { value: 20, unit: 'deg/h', source: COMMON, commonPractice: true },
      gyroRateRandomWalk: { value: 60, unit: 'deg/h/sqrt(h)', source: COMMON, commonPractice: true },
      accNoiseDensity: { value: 400, unit: 'ug/sqrt(Hz)', source: MPU6000, commonPractice: false },
      // 20-100 ug is the usual consumer range (reference-checks.md sec. 7.2 "suggested defaults"); upper end.
      accBiasInstability: { value: 100, unit: 'ug', source: COMMON, commonPractice: true },
      accRateRandomWalk: { value: 600, unit: 'ug/sqrt(h)', source: COMMON, commonPractice: true },
    },
  },
  industrial: {
    name: 'industrial',
    description: 'industrial MEMS (ADIS16470 / MTi-1 class)',
    figures: {
      gyroNoiseDensity: { value: 0.008, unit: 'deg/s/sqrt(Hz)', source: ADIS16470, commonPractice: false },
      gyroBiasInstability: { value: 8, unit: 'deg/h', source: ADIS16470, commonPractice: false },
      gyroRateRandomWalk: { value: 10, unit: 'deg/h/sqrt(h)', source: COMMON, commonPractice: true },
      accNoiseDensity: { value: 120, unit: 'ug/sqrt(Hz)', source: MTI1, commonPractice: false },
      accBiasInstability: { value: 13, unit: 'ug', source: ADIS16470, commonPractice: false },
      accRateRandomWalk: { value: 100, unit: 'ug/sqrt(h)', source: COMMON, commonPractice: true },
    },
  },
  tactical: {
    name: 'tactical',
    description: 'tactical grade (ADIS16495-1 class)',
    figures: {
      gyroNoiseDensity: { value: 0.09, unit: 'deg/sqrt(h)', source: ADIS16495, commonPractice: false },
      gyroBiasInstability: { value: 0.8, unit: 'deg/h', source: ADIS16495, commonPractice: false },
      gyroRateRandomWalk: { value: 1, unit: 'deg/h/sqrt(h)', source: COMMON, commonPractice: true },
      accNoiseDensity: { value: 0.02, unit: 'm/s/sqrt(h)', source: COMMON, commonPractice: true },
      accBiasInstability: { value: 3.2, unit: 'ug', source: ADIS16495, commonPractice: false },
      accRateRandomWalk: { value: 20, unit: 'ug/sqrt(h)', source: COMMON, commonPractice: true },
    },
  },
};

/** The preset used when neither the mapping file nor the settings give a specification. */
export const DEFAULT_PRESET = 'consumer';

/** A preset converted to SI, as an `ImuSpec` whose origin is `preset:<name>`. Undefined for an unknown name. */
export function presetSpec(name: string): ImuSpec | undefined {
  const preset = IMU_PRESETS[name.trim().toLowerCase()];
  if (!preset) return undefined;
  const spec: ImuSpec = { origin: `preset:${preset.name}` };
  for (const field of Object.keys(SPEC_FIELDS) as ImuSpecField[]) {
    const f = preset.figures[field];
    const parsed = parseFigure(`${f.value} ${f.unit}`, SPEC_FIELDS[field]);
    if ('value' in parsed) spec[field] = parsed.value;
  }
  return spec;
}

/**
 * A user-written specification: each field a number (already SI), a datasheet string such as `"10 deg/h"` or
 * `"0.005 deg/s/sqrt(Hz)"`, or `{ value, unit }` as the mapping file writes it. `preset` names a preset that fills
 * the fields not given.
 */
export type ImuSpecInput = Partial<Record<ImuSpecField, number | string | ImuSpecValue>> & { preset?: string };

/**
 * Convert a user-written specification to SI. Fields that cannot be read are left out and described in `problems`
 * (field name and the reason).
 */
export function specFromInput(input: ImuSpecInput, origin: string): { spec: ImuSpec; problems: string[] } {
  const spec: ImuSpec = { origin };
  const problems: string[] = [];
  for (const field of Object.keys(SPEC_FIELDS) as ImuSpecField[]) {
    const raw = input[field];
    if (raw === undefined) continue;
    const text = typeof raw === 'object' && raw !== null ? `${raw.value} ${raw.unit ?? ''}` : raw;
    const parsed = typeof text === 'number' || typeof text === 'string' ? parseFigure(text, SPEC_FIELDS[field]) : { error: 'expected a number, "<number> <unit>" or { value, unit }' };
    if ('value' in parsed) spec[field] = parsed.value;
    else problems.push(`${field}: ${parsed.error}`);
  }
  for (const key of Object.keys(input)) {
    if (key !== 'preset' && !(key in SPEC_FIELDS)) problems.push(`${key}: not an IMU specification field (expected one of ${Object.keys(SPEC_FIELDS).join(', ')})`);
  }
  return { spec, problems };
}

/** The specification actually used, with the origin of every field. */
export interface ResolvedSpec {
  spec: Required<Omit<ImuSpec, 'origin'>> & { origin: string };
  /** Origin of each field: 'settings', 'mapping' or 'preset:<name>'. */
  fieldOrigin: Record<ImuSpecField, string>;
  /** True when no field came from the mapping file or the settings (the tool's default preset was used). */
  defaulted: boolean;
  /** Problems met while reading the user's specification or preset name. */
  problems: string[];
}

/**
 * Resolve the specification. For each field the first available wins: the settings override, the mapping file's
 * (datasheet form `imuSpecRaw`, else SI `imuSpec`), then the preset: the one named in the settings override, else in
 * the mapping file, else the settings' `imuPreset`, else consumer.
 * @param mapping the mapping file's specification in SI, if any
 * @param override the settings' specification, if any
 * @param presetName the settings' preset name
 * @param mappingRaw the mapping file's specification as written (datasheet units), if any
 */
export function resolveSpec(mapping: ImuSpec | undefined, override: ImuSpecInput | undefined, presetName: string, mappingRaw?: ImuSpecRaw): ResolvedSpec {
  const problems: string[] = [];
  const wanted = (override?.preset ?? mappingRaw?.preset ?? presetName ?? DEFAULT_PRESET).trim().toLowerCase();
  let preset = presetSpec(wanted);
  let presetOrigin = `preset:${wanted}`;
  if (!preset) {
    problems.push(`unknown IMU preset "${wanted}" (known: ${Object.keys(IMU_PRESETS).join(', ')}); using ${DEFAULT_PRESET}`);
    preset = presetSpec(DEFAULT_PRESET) as ImuSpec;
    presetOrigin = `preset:${DEFAULT_PRESET}`;
  }
  const fromSettings = override ? specFromInput(override, 'settings') : undefined;
  if (fromSettings) problems.push(...fromSettings.problems.map((p) => `settings imuSpec ${p}`));
  const fromMappingRaw = mappingRaw ? specFromInput(mappingRaw as ImuSpecInput, 'mapping') : undefined;
  if (fromMappingRaw) problems.push(...fromMappingRaw.problems.map((p) => `mapping file imuSpec ${p}`));
  const out = { origin: '' } as ResolvedSpec['spec'];
  const fieldOrigin = {} as Record<ImuSpecField, string>;
  const origins = new Set<string>();
  for (const field of Object.keys(SPEC_FIELDS) as ImuSpecField[]) {
    const s = fromSettings?.spec[field];
    const r = fromMappingRaw?.spec[field];
    const m = mapping?.[field];
    let value: number;
    let origin: string;
    if (s !== undefined && Number.isFinite(s)) { value = s; origin = 'settings'; }
    else if (r !== undefined && Number.isFinite(r)) { value = r; origin = 'mapping'; }
    else if (m !== undefined && Number.isFinite(m) && m >= 0) { value = m; origin = 'mapping'; }
    else { value = preset[field] as number; origin = presetOrigin; }
    out[field] = value;
    fieldOrigin[field] = origin;
    origins.add(origin);
  }
  out.origin = [...origins].join('+');
  const defaulted = [...origins].every((o) => o.startsWith('preset:'));
  return { spec: out, fieldOrigin, defaulted, problems };
}

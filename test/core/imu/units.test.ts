import { describe, expect, it } from 'vitest';
import { fromSI, knownUnits, normalizeUnit, parseFigure, toSI, RAD_PER_DEG } from '../../../extension/core/imu/units';
import { IMU_PRESETS, presetSpec, resolveSpec, SPEC_FIELDS, specFromInput } from '../../../extension/core/imu/presets';

function rel(a: number, b: number): number {
  return Math.abs(a - b) / Math.abs(b);
}

describe('datasheet unit conversions', () => {
  it('deg/h to rad/s is a division by 206264.8', () => {
    // Source: reference-checks.md sec. 7.2 ("deg/h -> rad/s / 206264.8")
    expect(rel(toSI(1, 'deg/h', 'rate')!, 1 / 206264.8)).toBeLessThan(1e-6);
    expect(rel(toSI(1, '°/hr')!, 1 / 206264.8)).toBeLessThan(1e-6);
  });
  it('ARW: noise density in deg/s/sqrt(Hz) times 60 is deg/sqrt(h)', () => {
    // Source: reference-checks.md sec. 3.1 and 7.2: MPU-6000 0.005 deg/s/sqrt(Hz) => ARW about 0.3 deg/sqrt(h)
    const si = toSI(0.005, 'deg/s/sqrt(Hz)', 'rateDensity')!;
    expect(si).toBeCloseTo(0.005 * RAD_PER_DEG, 15);
    expect(rel(fromSI(si, 'deg/sqrt(h)', 'rateDensity')!, 0.3)).toBeLessThan(1e-12);
    expect(rel(toSI(0.3, 'deg/√h')!, si)).toBeLessThan(1e-12);
  });
  it('sigma(1 s) of 178.182 deg/h is 2.97 deg/sqrt(h)', () => {
    // Source: reference-checks.md sec. 3.1 [READ] (electronics.stackexchange q. 101045)
    const sigma1 = toSI(178.182, 'deg/h', 'rate')!; // rad/s at tau = 1 s, numerically N in rad/sqrt(s)
    expect(fromSI(sigma1, 'deg/sqrt(h)', 'rateDensity')!).toBeCloseTo(2.97, 2);
  });
  it('VRW: 400 ug/sqrt(Hz) is about 0.235 m/s/sqrt(h)', () => {
    // Source: reference-checks.md sec. 7.2 (MPU-6000: 400 ug/sqrt(Hz) => VRW about 0.235 m/s/sqrt(h))
    const si = toSI(400, 'µg/√Hz', 'accelDensity')!;
    expect(si).toBeCloseTo(400e-6 * 9.80665, 15);
    expect(fromSI(si, 'm/s/sqrt(h)', 'accelDensity')!).toBeCloseTo(0.235, 3);
  });
  it('rate random walk and accelerometer units', () => {
    // 1 deg/h/sqrt(h) = (pi/180) / 3600 / 60 rad/s/sqrt(s) (derivation: sqrt(h) = 60 sqrt(s))
    expect(rel(toSI(1, 'deg/h/sqrt(h)', 'rateRandomWalk')!, RAD_PER_DEG / 216000)).toBeLessThan(1e-15);
    expect(toSI(1, 'mg', 'accel')).toBeCloseTo(9.80665e-3, 15);
    expect(toSI(1, 'ug/sqrt(h)', 'accelRandomWalk')).toBeCloseTo(9.80665e-6 / 60, 18);
    expect(toSI(3, 'm/s/h/sqrt(h)', 'accelRandomWalk')).toBeCloseTo(3 / 216000, 18);
  });
  it('round trips every unit of the table', () => {
    const all = knownUnits();
    for (const [kind, units] of Object.entries(all)) {
      for (const u of units) {
        const si = toSI(1.2345, u, kind as keyof typeof all)!;
        expect(fromSI(si, u)).toBeCloseTo(1.2345, 12);
      }
    }
  });
  it('refuses a unit of another kind and unknown units, with a message', () => {
    expect(toSI(1, 'deg/h', 'accel')).toBeUndefined();
    const wrong = parseFigure('10 deg/h', 'accel');
    expect('error' in wrong && wrong.error).toContain('is a rate unit');
    const unknown = parseFigure('10 parsecs', 'rate');
    expect('error' in unknown && unknown.error).toContain('unknown unit "parsecs"');
    const neg = parseFigure('-3 deg/h', 'rate');
    expect('error' in neg).toBe(true);
    expect(parseFigure(1e-5, 'rate')).toEqual({ value: 1e-5 });
  });
  it('normalises common spellings', () => {
    expect(normalizeUnit('°/s/√Hz')).toBe('deg/s/sqrt(hz)');
    expect(normalizeUnit('deg/hr/rt-Hz')).toBe('deg/h/sqrt(hz)');
    expect(normalizeUnit('dps/rtHz')).toBe('deg/s/sqrt(hz)');
    expect(normalizeUnit('μg / √Hz')).toBe('ug/sqrt(hz)');
  });
});

describe('presets', () => {
  it('every preset value has a source and converts to SI', () => {
    for (const preset of Object.values(IMU_PRESETS)) {
      const spec = presetSpec(preset.name)!;
      for (const field of Object.keys(SPEC_FIELDS) as (keyof typeof SPEC_FIELDS)[]) {
        const fig = preset.figures[field];
        expect(fig.source.length).toBeGreaterThan(10);
        expect(fig.commonPractice).toBe(fig.source.startsWith('common practice'));
        expect(spec[field]).toBeGreaterThan(0);
      }
    }
  });
  it('published datasheet figures are kept as read', () => {
    // Source: reference-checks.md sec. 7.2 [READ]: ADIS16470 8 deg/h and 13 ug; ADIS16495-1 0.8 deg/h, 0.09 deg/sqrt(h), 3.2 ug
    expect(IMU_PRESETS.industrial.figures.gyroBiasInstability).toMatchObject({ value: 8, unit: 'deg/h', commonPractice: false });
    expect(IMU_PRESETS.industrial.figures.accBiasInstability).toMatchObject({ value: 13, unit: 'ug' });
    expect(IMU_PRESETS.tactical.figures.gyroBiasInstability).toMatchObject({ value: 0.8, unit: 'deg/h' });
    expect(IMU_PRESETS.tactical.figures.gyroNoiseDensity).toMatchObject({ value: 0.09, unit: 'deg/sqrt(h)' });
    expect(IMU_PRESETS.tactical.figures.accBiasInstability).toMatchObject({ value: 3.2, unit: 'ug' });
    // the rate random walk has no published grade figure: marked common practice in every preset
    for (const p of Object.values(IMU_PRESETS)) expect(p.figures.gyroRateRandomWalk.commonPractice).toBe(true);
    // grades are ordered
    expect(presetSpec('consumer')!.gyroBiasInstability!).toBeGreaterThan(presetSpec('industrial')!.gyroBiasInstability!);
    expect(presetSpec('industrial')!.gyroBiasInstability!).toBeGreaterThan(presetSpec('tactical')!.gyroBiasInstability!);
  });
  it('resolution order: settings, then mapping (raw or SI), then preset', () => {
    const r = resolveSpec(
      { origin: 'mapping', gyroNoiseDensity: 1e-4, accBiasInstability: 5e-4 },
      { gyroNoiseDensity: '0.01 deg/s/sqrt(Hz)' },
      'industrial',
      { gyroBiasInstability: { value: 5, unit: 'deg/h' } },
    );
    expect(r.fieldOrigin.gyroNoiseDensity).toBe('settings');
    expect(r.spec.gyroNoiseDensity).toBeCloseTo(0.01 * RAD_PER_DEG, 15);
    expect(r.fieldOrigin.gyroBiasInstability).toBe('mapping');
    expect(r.spec.gyroBiasInstability).toBeCloseTo(toSI(5, 'deg/h')!, 15);
    expect(r.fieldOrigin.accBiasInstability).toBe('mapping');
    expect(r.fieldOrigin.accRateRandomWalk).toBe('preset:industrial');
    expect(r.defaulted).toBe(false);
    expect(r.problems).toEqual([]);
  });
  it('an unknown preset falls back to consumer with a problem', () => {
    const r = resolveSpec(undefined, undefined, 'navigation-grade-9000');
    expect(r.problems.join()).toContain('unknown IMU preset');
    expect(r.spec.origin).toBe('preset:consumer');
    expect(r.defaulted).toBe(true);
  });
  it('reports unknown fields of a user specification', () => {
    const { problems } = specFromInput({ gyroNoise: 3 } as never, 'settings');
    expect(problems.join()).toContain('gyroNoise: not an IMU specification field');
  });
});

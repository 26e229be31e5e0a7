/**
 * Real data: Allan deviation of a static UWB range series.
 * Source: ../shared/data/uwb-planar-mocap (MIT, LIAS-CUHKSZ "Efficient Planar Pose Estimation via UWB Measurements",
 * commit cabd392), file UWB_static_exp_8_14_pos1_deg_0.csv: header-less CSV, 25 columns, wall-clock time strings,
 * column 1 = range a0-t0 in metres. Its SOURCE_AND_LICENSE.md records: "overlapping Allan deviation of range a0-t0
 * falls with slope -0.4..-0.6 for tau 4 ms .. 4 s (white-noise dominated, sigma(4 ms) = 0.036 m)".
 * The series is read here with a tiny local reader so that this check does not depend on the project's reader.
 */
import { describe, expect, it } from 'vitest';
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { allanDeviation } from '../../extension/core/imu/index';
import { readNoiseFigures } from '../../extension/core/imu/noiseFigures';

const DATA = path.resolve(__dirname, '../../..', 'shared/data/uwb-planar-mocap/UWB_static_exp_8_14_pos1_deg_0.csv');
const present = existsSync(DATA);
if (!present) console.warn(`skipping the real-data Allan check: ${DATA} is absent (../shared/data is not part of the repository)`);

/** Seconds of a wall-clock string `YYYY-MM-DD H:MM:SS.mmm` (taken as UTC; only differences matter here). */
function wallClock_s(s: string): number {
  const m = /^(\d{4})-(\d{2})-(\d{2}) (\d{1,2}):(\d{2}):(\d{2}(?:\.\d+)?)$/.exec(s.trim());
  if (!m) return NaN;
  return Date.UTC(+m[1], +m[2] - 1, +m[3], +m[4], +m[5]) / 1000 + Number(m[6]);
}

describe.skipIf(!present)('uwb-planar-mocap static range a0-t0', () => {
  const lines = present ? readFileSync(DATA, 'utf8').split(/\r?\n/).filter((l) => l.length > 0) : [];
  const t = new Float64Array(lines.length);
  const r = new Float64Array(lines.length);
  lines.forEach((l, i) => {
    const cells = l.split(',');
    t[i] = wallClock_s(cells[0]);
    r[i] = cells[1] === '' ? NaN : Number(cells[1]);
  });

  it('reads as the source note describes (10635 rows, 25 columns, about 4 ms spacing)', () => {
    expect(lines.length).toBe(10635);
    expect(lines[0].split(',').length).toBe(25);
    const steps = Array.from(t.subarray(1)).map((v, i) => v - t[i]).sort((a, b) => a - b);
    expect(steps[steps.length >> 1]).toBeCloseTo(0.004, 3);
  });

  it('has an Allan slope of about -1/2 at short tau, and sigma(4 ms) about 0.036 m', () => {
    const steps = Array.from(t.subarray(1)).map((v, i) => v - t[i]).sort((a, b) => a - b);
    const tau0 = steps[steps.length >> 1];
    // the range is a "rate-like" (frequency-type) series: ADEV of the plain series
    const c = allanDeviation(r, tau0);
    // least-squares slope of log sigma against log tau for tau0 <= tau <= 4 s
    const pts: [number, number][] = [];
    for (let i = 0; i < c.tau_s.length; i++) if (c.tau_s[i] <= 4.0001) pts.push([Math.log(c.tau_s[i]), Math.log(c.adev[i])]);
    expect(pts.length).toBeGreaterThanOrEqual(8);
    const mx = pts.reduce((s, p) => s + p[0], 0) / pts.length;
    const my = pts.reduce((s, p) => s + p[1], 0) / pts.length;
    const slope = pts.reduce((s, p) => s + (p[0] - mx) * (p[1] - my), 0) / pts.reduce((s, p) => s + (p[0] - mx) ** 2, 0);
    expect(slope).toBeGreaterThan(-0.6);
    expect(slope).toBeLessThan(-0.4);
    // sigma at tau0 equals the 0.036 m of the source note within 10%
    expect(Math.abs(c.adev[0] / 0.036 - 1)).toBeLessThan(0.1);
    // the read-off finds the white-noise line at the short taus
    const fig = readNoiseFigures(c, 'plain', {}, { plainUnit: 'm' });
    expect(fig.N).toBeDefined();
    expect(fig.N!.tauRange_s[0]).toBeLessThan(0.05);
    expect(fig.N!.unit).toBe('m*sqrt(s)');
  });
});

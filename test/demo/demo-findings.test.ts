/**
 * The shipped demo shows what demo/README.md promises: the whole pipeline (reader, analysis) run on
 * demo/warehouse-flight.csv finds each injected fault at its documented time. The expected values hold by
 * construction of the generator (a constructed case in the sense of reference-checks.md), not from a publication.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { readLogText } from '../../extension/core/read/index';
import { analyzeLog } from '../../extension/core/analyze';
import { DEFAULT_SETTINGS } from '../../extension/core/settings';
import { DEMO_FLIGHT_OPTIONS, warehouseFaults } from '../../extension/core/demo/warehouse';
import type { Report } from '../../extension/core/report';
import type { BiasBlock } from '../../extension/core/imu/index';
import { chi2MeanBounds } from './helpers';

const root = resolve(__dirname, '../..');
const faults = warehouseFaults(DEMO_FLIGHT_OPTIONS);
const fault = (kind: string) => faults.find((f) => f.kind === kind)!;

describe('the demo log through the whole analysis', async () => {
  const text = readFileSync(resolve(root, 'demo/warehouse-flight.csv'), 'utf8');
  const log = await readLogText(text, 'demo/warehouse-flight.csv');
  const report: Report = analyzeLog(log, { ...DEFAULT_SETTINGS }).report;
  const findings = report.findings;
  const overlaps = (t: number | undefined, tEnd: number | undefined, a: number, b: number) =>
    t !== undefined && (tEnd ?? t) >= a && t <= b;

  it('reads every row with the documented metadata and no reader errors', () => {
    expect(log.state.length).toBe(5920);
    expect(log.frame).toBe('ENU');
    expect(log.anchors.map((a) => a.id)).toEqual(['0', '1', '2', '3', '4', '5', '6', '7']);
    expect(log.diagnostics.filter((d) => d.severity === 'error')).toEqual([]);
    expect(log.channels.map((c) => [c.name, c.dof]).sort()).toEqual([['mag', 3], ['tdoa', 1]]);
  });

  it('fault 1: anchor 5 is the suspect, and only anchor 5', () => {
    const suspects = findings.filter((f) => f.kind === 'suspect-anchor');
    expect(suspects.length).toBeGreaterThan(0);
    expect(suspects.every((f) => /anchor 5\b/i.test(f.message))).toBe(true);
    const n = fault('nlos');
    expect(findings.some((f) => f.kind === 'inconsistent' && f.channel === 'tdoa' && overlaps(f.t, f.tEnd, n.t_s, n.tEnd_s!))).toBe(true);
  });

  it('fault 2: a gyro z bias step near its time', () => {
    const step = fault('gyro-bias-step').t_s;
    const steps = (report.bias as BiasBlock | undefined)?.gyro?.steps ?? [];
    expect(steps.some((s) => s.axis === 2 && Math.abs(s.t - step) < 1 && s.size > 0.01)).toBe(true);
  });

  it('fault 3: the TDOA channel is inconsistent over the overconfident stretch', () => {
    const o = fault('overconfident');
    expect(findings.some((f) => f.kind === 'inconsistent' && f.channel === 'tdoa' && overlaps(f.t, f.tEnd, o.t_s, o.tEnd_s!))).toBe(true);
  });

  it('fault 4: a time gap ending where records start again', () => {
    const g = fault('time-gap');
    expect(findings.some((f) => f.kind === 'time-gap' && Math.abs((f.t ?? -1) - g.tEnd_s!) < 0.02)).toBe(true);
  });

  it('fault 5: one bad rotation, at its line', () => {
    const bad = findings.filter((f) => f.kind === 'bad-rotation');
    expect(bad.map((f) => f.line)).toEqual([5395]);
  });

  it('the mag channel, untouched by faults, is consistent on average', () => {
    const mag = report.channels.find((c) => c.name === 'mag');
    const [lo, hi] = chi2MeanBounds(mag!.updates, 3);
    expect(mag?.nis?.mean).toBeGreaterThan(lo);
    expect(mag?.nis?.mean).toBeLessThan(hi);
  });
});

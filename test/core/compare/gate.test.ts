/**
 * The CI gate on a report (core/gate.ts): every threshold at its limit passes and just beyond fails; the baseline
 * comparison's tolerance rules; settling time read where the errors stage writes it. Report from a seeded run of
 * our own demo generator (invented scene).
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { generateWarehouseLog } from '../../../extension/core/demo/warehouse';
import { analyzeFile } from '../../../extension/node/analyzeFile';
import { evaluateGate, compareWithBaseline, worstSettleTime, hasThresholds } from '../../../extension/core/gate';
import type { Report } from '../../../extension/core/report';
import { reportProblems } from '../../helpers/reportSchema';

let report: Report;

beforeAll(async () => {
  const file = path.join(mkdtempSync(path.join(tmpdir(), 'residuum-gate-')), 'run.csv');
  writeFileSync(file, [...generateWarehouseLog({ duration_s: 20, seed: 31, imuRate_hz: 0 })].join(''));
  report = (await analyzeFile(file)).report;
  expect(reportProblems(report)).toEqual([]);
}, 60_000);

const conv = (r: Report, b: string): number => ((r.errors as Record<string, Record<string, { settleTime: number }>>).convergence[b]).settleTime;

describe('evaluateGate', () => {
  it('settling time is the largest of the error blocks', () => {
    const expected = Math.max(conv(report, 'position'), conv(report, 'velocity'), conv(report, 'orientation'));
    expect(worstSettleTime(report)).toBe(expected);
  });
  it('each threshold passes at its limit and fails just beyond', () => {
    const total = report.channels.reduce((s, c) => s + c.outliers, 0);
    const rmse = (report.errors as Record<string, Record<string, number>>).position.rmse;
    const settle = worstSettleTime(report)!;
    const tdoa = report.channels.find((c) => c.name === 'tdoa')!;
    const atLimit = evaluateGate(report, { maxOutliers: total, maxRmse_m: rmse, maxSettleTime_s: settle, channels: { tdoa: { minInside95: tdoa.nis.inside95!, maxOutliers: tdoa.outliers } } });
    expect(atLimit.every((r) => r.pass)).toBe(true);
    expect(atLimit).toHaveLength(5);
    const beyond = evaluateGate(report, { maxOutliers: total - 1, maxRmse_m: rmse * (1 - 1e-9), maxSettleTime_s: settle - 1e-6, channels: { tdoa: { minInside95: tdoa.nis.inside95! + 1e-9, maxOutliers: tdoa.outliers - 1 } } });
    expect(beyond.map((r) => r.pass)).toEqual([false, false, false, false, false]);
  });
  it('a figure the report lacks fails with "not computed"', () => {
    const noErrors = { ...report, errors: undefined };
    const [r] = evaluateGate(noErrors, { maxRmse_m: 100 });
    expect(r.pass).toBe(false);
    expect(r.message).toMatch(/not computed/);
  });
  it('hasThresholds sees per-channel thresholds and nothing else', () => {
    expect(hasThresholds({})).toBe(false);
    expect(hasThresholds({ channels: { tdoa: {} } })).toBe(false);
    expect(hasThresholds({ channels: { tdoa: { maxOutliers: 0 } } })).toBe(true);
  });
});

describe('compareWithBaseline', () => {
  it('the same report passes at zero tolerance', () => {
    const results = compareWithBaseline(report, report, 0);
    expect(results.length).toBeGreaterThan(5);
    expect(results.every((r) => r.pass)).toBe(true);
  });
  it('outliers 20% worse fail at 10% and pass at 25%', () => {
    const worse = structuredClone(report);
    const ch = worse.channels.find((c) => c.name === 'tdoa')!;
    const base = structuredClone(report);
    base.channels.find((c) => c.name === 'tdoa')!.outliers = 10;
    ch.outliers = 12;
    const at10 = compareWithBaseline(worse, base, 10).find((r) => r.what === 'tdoa: outliers vs baseline')!;
    expect(at10.pass).toBe(false);
    expect(compareWithBaseline(worse, base, 25).find((r) => r.what === at10.what)!.pass).toBe(true);
  });
  it('NIS inside 95%: the distance to 95% may grow by the tolerance plus 0.5 points, either side', () => {
    const base = structuredClone(report);
    const now = structuredClone(report);
    base.channels[0].nis.inside95 = 0.94;
    now.channels[0].nis.inside95 = 0.96; // same distance, other side
    const what = `${base.channels[0].name}: NIS inside 95% bounds vs baseline`;
    expect(compareWithBaseline(now, base, 0).find((r) => r.what === what)!.pass).toBe(true);
    now.channels[0].nis.inside95 = 0.99; // distance 0.04 > 0.01 + 0.005
    expect(compareWithBaseline(now, base, 10).find((r) => r.what === what)!.pass).toBe(false);
  });
  it('a channel or block the baseline has and the run lacks fails', () => {
    const now = structuredClone(report);
    const dropped = now.channels.pop()!;
    delete now.errors;
    const failed = compareWithBaseline(now, report, 50).filter((r) => !r.pass).map((r) => r.what);
    expect(failed).toContain(`${dropped.name}: outliers vs baseline`);
    expect(failed).toContain('position RMSE vs baseline');
  });
});

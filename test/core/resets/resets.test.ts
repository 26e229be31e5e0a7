/**
 * Filter restarts: covariance-jump candidates, confirmed resets splitting the run, per-segment convergence and
 * consistency, and windows that never straddle a restart. Logs are seeded Kalman-filter simulations of our own
 * (simKf.ts) and the shipped demo (an invented scene).
 */
import { describe, expect, it } from 'vitest';
import path from 'node:path';
import { analyzeLog } from '../../../extension/core/analyze';
import { resolveSettings } from '../../../extension/core/settings';
import {
  analyzeResets, detectCovarianceJumps, effectiveResets, mergeResetTimes, segmentBreaks, stateBlock,
} from '../../../extension/core/resets/index';
import { slidingAverage, windowTest } from '../../../extension/core/consistency/window';
import { analyzeFile } from '../../../extension/node/analyzeFile';
import type { ErrorsBlock } from '../../../extension/core/errors/index';
import type { ResetsBlock } from '../../../extension/core/resets/index';
import { worstSettleTime } from '../../../extension/core/gate';
import { segmentTable } from '../../../extension/core/export/figures';
import { renderReportMarkdown } from '../../../extension/core/export/markdown';
import { reportProblems } from '../../helpers/reportSchema';
import { navLog, stateStream } from '../errors/fixtures';
import { simulateKf } from './simKf';

const ROOT = path.resolve(__dirname, '../../..');

/** Index of the first epoch at or after t. */
function firstAtOrAfter(t_s: Float64Array, t: number): number {
  let k = 0;
  while (k < t_s.length && t_s[k] < t) k++;
  return k;
}

describe('stateBlock and segment helpers', () => {
  it('groups axis suffixes and indices, keeps other names whole', () => {
    expect(['p_x', 'p_y', 'v_z', 'att_0', 'att_2', 'bg_x', 'q_w', 'clock', 'ba'].map(stateBlock))
      .toEqual(['p', 'p', 'v', 'att', 'att', 'bg', 'q', 'clock', 'ba']);
  });

  it('merges reset times (sorted, unique, finite) and finds the first index at or after each', () => {
    expect(mergeResetTimes([3, 1, NaN], undefined, [1, 2])).toEqual([1, 2, 3]);
    const t = Float64Array.of(0, 1, 2, 3, 4, 5);
    // a reset at the first record starts no new segment; 2.5 -> index 3; 9 is after the end
    expect(segmentBreaks(t, 0, 6, [0, 2.5, 3, 9])).toEqual([3]);
    expect(segmentBreaks(t, 0, 6, [1, 4])).toEqual([1, 4]);
  });
});

describe('covariance-jump detection on seeded Kalman filter runs', () => {
  it('a re-initialisation (covariance back to its initial value) is found at its epoch, and only there', () => {
    for (const seed of [1, 2, 3]) {
      const log = simulateKf({ seed, resetAt_s: 60 });
      const jumps = detectCovarianceJumps(log.state);
      const k = firstAtOrAfter(log.state.t_s, 60);
      expect(jumps.map((j) => j.index)).toEqual([k]);
      // velocity goes from its converged variance back to v0 = 4 per axis
      expect(jumps[0].factor).toBeGreaterThan(100);
      expect(jumps[0].line).toBe(k + 2);
      expect(jumps[0].sigmaAfter).toBeCloseTo(Math.sqrt(3 * (jumps[0].block === 'v' ? 4 : 25)), 9);
    }
  });

  it('consistent runs without a restart raise no candidate (20 seeds)', () => {
    for (let seed = 100; seed < 120; seed++) {
      expect(detectCovarianceJumps(simulateKf({ seed, epochs: 600 }).state)).toEqual([]);
    }
  });

  it('a measurement outage without state records (P grows for 8 s) is not a restart; its raw growth would be', () => {
    for (const seed of [31, 32, 33]) {
      const log = simulateKf({ seed, epochs: 900, outage_s: [40, 48] });
      const k = firstAtOrAfter(log.state.t_s, 48);
      const v = (name: string, i: number): number => (log.state.columns.get(name) as Float64Array)[i] ** 2;
      // across the gap the position variance grows far beyond the threshold ...
      const raw = ['x', 'y', 'z'].reduce((a, ax) => a + v(`sigma_p_${ax}`, k), 0) / ['x', 'y', 'z'].reduce((a, ax) => a + v(`sigma_p_${ax}`, k - 1), 0);
      expect(raw).toBeGreaterThan(10);
      // ... but per median step it is a prediction's growth
      expect(detectCovarianceJumps(log.state)).toEqual([]);
    }
    // a restart right after such a gap stays detectable when the log is not gapped
    expect(detectCovarianceJumps(simulateKf({ seed: 31, epochs: 900, resetAt_s: 48 }).state).map((j) => j.t)).toEqual([48]);
  });

  it('the factor setting decides: a 5-fold variance step is a candidate at factor 4, not at the default 10', () => {
    const t = Float64Array.from({ length: 50 }, (_, i) => i * 0.1);
    const s = Float64Array.from(t, (x) => (x >= 2.5 ? Math.sqrt(5) : 1));
    const log = navLog(stateStream(t, { p_x: new Float64Array(50), sigma_p_x: s }));
    expect(detectCovarianceJumps(log.state)).toEqual([]);
    const j = detectCovarianceJumps(log.state, 4);
    expect(j).toHaveLength(1);
    expect(j[0].index).toBe(25);
    expect(j[0].factor).toBeCloseTo(5, 12);
  });

  it('NaN and zero variances are stepped over; the full P diagonal is used when logged', () => {
    const t = Float64Array.from({ length: 6 }, (_, i) => i);
    const sig = [1, NaN, 0, 1, 1, 1];
    const log = navLog(stateStream(t, { sigma_p_x: sig, sigma_p_y: [1, 1, 1, 1, 1, 1] }));
    expect(detectCovarianceJumps(log.state)).toEqual([]);
    // P (2 states) whose p_x variance jumps from 1 to 100 at epoch 4; the sigma columns (flat) are ignored
    const P = new Float64Array(6 * 4);
    for (let i = 0; i < 6; i++) { P[i * 4] = i === 4 ? 100 : 1; P[i * 4 + 3] = 1; }
    log.state.P = { states: ['p_x', 'p_y'], matrix: P };
    const j = detectCovarianceJumps(log.state);
    expect(j.map((x) => [x.index, x.block])).toEqual([[4, 'p']]);
    expect(j[0].factor).toBeCloseTo(101 / 2, 12); // trace of the p block: (100 + 1) / (1 + 1)
  });

  it('a variance logged as almost 0 is raised to the floor (a millionth of the median) before the ratio', () => {
    // Constructed: sigma 1 everywhere except 1e-10 at epoch 20 (variance 1e-20); the floor is 1e-6 * median 1, so
    // the ratio at epoch 21 is 1 / 1e-6, not 1e20. A block with no finite variance (v) has no floor and is left out.
    const t = Float64Array.from({ length: 40 }, (_, i) => i * 0.1);
    const s = Float64Array.from(t, (_, i) => (i === 20 ? 1e-10 : 1));
    const log = navLog(stateStream(t, { sigma_p_x: s, sigma_v_x: new Float64Array(40).fill(NaN) }));
    const j = detectCovarianceJumps(log.state);
    expect(j.map((x) => [x.index, x.block])).toEqual([[21, 'p']]);
    expect(j[0].factor).toBeCloseTo(1e6, 3);
    expect(j[0].sigmaBefore).toBeCloseTo(1e-10, 20);
    // without the tiny value and with the empty block the same: nothing
    const flat = navLog(stateStream(t, { sigma_p_x: new Float64Array(40).fill(1), sigma_v_x: new Float64Array(40).fill(NaN) }));
    expect(detectCovarianceJumps(flat.state)).toEqual([]);
  });

  it('the shipped demo (a converging filter) has no candidate', async () => {
    const { report } = await analyzeFile(path.join(ROOT, 'demo/warehouse-flight.csv'), { anchors: path.join(ROOT, 'demo/anchors.csv'), notes: [] });
    expect(reportProblems(report)).toEqual([]);
    const r = report.resets as ResetsBlock;
    expect(r.candidates).toEqual([]);
    expect(r.segments).toHaveLength(1);
    expect(report.findings.filter((f) => f.kind === 'covariance-jump')).toEqual([]);
  });
});

describe('confirmed resets split the run; convergence and consistency per segment', () => {
  const log = simulateKf({ seed: 7, resetAt_s: 60 });
  const k = firstAtOrAfter(log.state.t_s, 60);
  const tReset = log.state.t_s[k];

  it('unconfirmed: one segment and an info finding covariance-jump at the epoch', () => {
    const { report } = analyzeLog(log, resolveSettings({}));
    expect(reportProblems(report)).toEqual([]);
    const r = report.resets as ResetsBlock;
    expect(r.segments.map((s) => s.start)).toEqual(['log']);
    expect(r.candidates.map((c) => [c.t, c.line, c.confirmed, c.logged])).toEqual([[tReset, k + 2, false, false]]);
    const f = report.findings.filter((x) => x.kind === 'covariance-jump');
    expect(f.map((x) => [x.t, x.line, x.severity])).toEqual([[tReset, k + 2, 'info']]);
    expect((report.errors as unknown as ErrorsBlock).segments).toHaveLength(1);
  });

  it('confirmed: two segments, both converge, NIS and NEES per segment, no finding for the confirmed jump', () => {
    const settings = resolveSettings({ confirmedResets_s: [tReset] });
    const { report } = analyzeLog(log, settings);
    expect(reportProblems(report)).toEqual([]);
    const r = report.resets as ResetsBlock;
    expect(r.confirmed).toEqual([tReset]);
    expect(r.segments.map((s) => [s.t, s.epochs, s.start])).toEqual([[0, k, 'log'], [tReset, 1200 - k, 'confirmed']]);
    expect(r.candidates[0].confirmed).toBe(true);
    expect(report.findings.some((x) => x.kind === 'covariance-jump')).toBe(false);

    const e = report.errors as unknown as ErrorsBlock;
    expect(e.segments.map((s) => s.t)).toEqual([0, tReset]);
    for (const seg of e.segments) {
      for (const block of [seg.position, seg.velocity]) {
        const c = block?.convergence;
        // the error starts at the initial sigma (5 m, 2 m/s per axis) and settles: a settling time and a decay rate
        expect(c?.settleTime).toBeGreaterThan(0);
        expect(c?.settleTime).toBeLessThan(30);
        expect(c?.rate).toBeGreaterThan(0);
        expect(c?.steadyState).toBeLessThan(block === seg.position ? 1.5 : 1);
      }
      // a consistent filter: the mean NEES of each segment is near its dof (3)
      expect(seg.position?.nees?.mean).toBeGreaterThan(2);
      expect(seg.position?.nees?.mean).toBeLessThan(4);
    }
    const nis = report.channels[0].nis as { segments?: { t: number; count: number; mean?: number; inside95?: number }[] };
    expect(nis.segments?.map((s) => s.t)).toEqual([log.channels[0].t_s[0], log.state.t_s[k + 1]]);
    for (const s of nis.segments ?? []) {
      // NIS of 3 dof: mean 3, about 95% inside the per-update bounds
      expect(s.mean).toBeGreaterThan(2.6);
      expect(s.mean).toBeLessThan(3.4);
      expect(s.inside95).toBeGreaterThan(0.92);
    }
    expect(report.findings.filter((x) => x.kind === 'inconsistent')).toEqual([]);
  });

  it('the settling-time gate looks at every segment, not only the first', () => {
    const { report } = analyzeLog(log, resolveSettings({ confirmedResets_s: [tReset] }));
    const e = report.errors as unknown as ErrorsBlock;
    const all = e.segments.flatMap((s) => [s.position, s.velocity].map((b) => b?.convergence.settleTime ?? -Infinity));
    const firstOnly = Math.max(...[e.convergence.position, e.convergence.velocity].map((c) => c?.settleTime ?? -Infinity));
    expect(worstSettleTime(report)).toBe(Math.max(...all));
    // seed 7: the velocity of the second segment settles later than anything in the first
    expect(Math.max(...all)).toBeGreaterThan(firstOnly);
  });

  it('effectiveResets joins the log own resets and the confirmed ones; a logged reset marks its candidate', () => {
    const withLogged = { ...log, resets: [tReset] };
    expect(effectiveResets(withLogged, resolveSettings({ confirmedResets_s: [90, tReset] }))).toEqual([tReset, 90]);
    const out = analyzeResets(withLogged, resolveSettings({}));
    expect(out.block?.candidates.map((c) => [c.logged, c.confirmed])).toEqual([[true, false]]);
    expect(out.block?.segments.map((s) => s.start)).toEqual(['log', 'logged']);
    expect(out.findings).toEqual([]);
  });

  it('the exports carry a segments table with each segment figures (none for one segment)', () => {
    const one = analyzeLog(log, resolveSettings({})).report;
    expect(segmentTable(one).rows).toEqual([]);
    expect(renderReportMarkdown(one)).not.toContain('#### Segments');
    const two = analyzeLog(log, resolveSettings({ confirmedResets_s: [tReset] })).report;
    const table = segmentTable(two);
    expect(table.rows.map((r) => [r[0], r[2], r[3]])).toEqual([['0', String(k), 'start of the log'], ['60', String(1200 - k), 'confirmed reset']]);
    const e = two.errors as unknown as ErrorsBlock;
    table.rows.forEach((row, i) => {
      expect(Number(row[5])).toBeCloseTo(e.segments[i].velocity?.convergence.settleTime as number, 2);
      expect(row[7]).toMatch(/^pos \d/);
    });
    expect(renderReportMarkdown(two)).toContain('#### Segments \\(each filter restart starts one');
  });

  it('a confirmed reset outside the records starts no segment and says so', () => {
    const out = analyzeResets(log, resolveSettings({ confirmedResets_s: [500, tReset] }));
    expect(out.block?.segments.map((s) => s.start)).toEqual(['log', 'confirmed']);
    expect(out.findings.map((f) => [f.kind, f.severity, f.t])).toEqual([['note', 'info', 500]]);
    expect(out.findings[0].message).toMatch(/outside the state records \(0 to 119\.9 s\); it starts no segment/);
  });
});

describe('windows never straddle a restart', () => {
  it('the sliding NIS average starts afresh at a break', () => {
    const t = Float64Array.from({ length: 40 }, (_, i) => i * 0.5);
    const nis = new Float64Array(40).fill(1);
    const a = slidingAverage(t, nis, 40, 1, { kind: 'seconds', size: 5 }, 0.95, undefined, [20]);
    expect(a.count[19]).toBe(10);
    expect(a.count[20]).toBe(1); // without the break it would reach back 5 s
    expect(Number.isNaN(a.lo[21])).toBe(true); // not a full window yet
    const u = slidingAverage(t, nis, 40, 1, { kind: 'updates', size: 8 }, 0.95, undefined, [20]);
    expect(Array.from(u.count.subarray(18, 23))).toEqual([8, 8, 1, 2, 3]);
  });

  it('the corrected window test places its windows from the segment start', () => {
    // [CONSTRUCTED] NIS 1 everywhere but 40 on the first five updates after the break at index 12
    const n = 40;
    const t = Float64Array.from({ length: n }, (_, i) => i);
    const nis = Float64Array.from({ length: n }, (_, i) => (i >= 12 && i < 17 ? 40 : 1));
    const spec = { kind: 'updates', size: 10 } as const;
    const joined = windowTest(t, nis, n, 1, spec, 0.01);
    const split = windowTest(t, nis, n, 1, spec, 0.01, undefined, [12]);
    expect(joined.runs[0].first).toBe(5); // windows [5, 15) and [10, 20) straddle the restart and are flagged
    expect(split.runs.map((r) => r.first)).toEqual([12]);
    expect(split.runs[0].side).toBe('overconfident');
  });
});

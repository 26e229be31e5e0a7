/**
 * End to end on the shipped demo log (our own invented warehouse scene, demo/README.md lists its injected faults):
 * the consistency stage must find the faults that concern innovations, where they are, and nothing else.
 */
import { describe, expect, it } from 'vitest';
import path from 'node:path';
import { analyzeFile } from '../../../extension/node/analyzeFile';
import { reportProblems } from '../../helpers/reportSchema';

const ROOT = path.resolve(__dirname, '../../..');

describe('demo warehouse flight: innovation faults', () => {
  it('flags the NLOS interval and the overconfident-S interval of the tdoa channel, and the mag channel is clean', async () => {
    const { report } = await analyzeFile(path.join(ROOT, 'demo/warehouse-flight.csv'), {
      anchors: path.join(ROOT, 'demo/anchors.csv'),
    });
    expect(reportProblems(report)).toEqual([]);
    const inc = report.findings.filter((f) => f.kind === 'inconsistent' && f.channel === 'tdoa');
    // demo/README.md: fault 1, NLOS on anchor 5 from 15.0 to 25.2 s; fault 3, logged S a quarter of the truth from
    // 37.2 to 44.4 s. Tested windows are 5 s every 2.5 s, so a run may reach up to one window beyond the fault.
    expect(inc.map((f) => f.side)).toEqual(['overconfident', 'overconfident']);
    expect(inc[0].t ?? NaN).toBeGreaterThanOrEqual(15 - 5);
    expect(inc[0].tEnd ?? NaN).toBeLessThanOrEqual(25.2 + 5);
    expect(inc[1].t ?? NaN).toBeGreaterThanOrEqual(37.2 - 5);
    expect(inc[1].t ?? NaN).toBeLessThanOrEqual(37.2 + 2.5);
    expect(inc[1].tEnd ?? NaN).toBeLessThanOrEqual(44.4 + 5);
    const consistencyKinds = ['inconsistent', 'not-white', 'innovation-bias', 'bad-covariance'];
    expect(report.findings.some((f) => f.channel === 'mag' && consistencyKinds.includes(f.kind))).toBe(false);
    const tdoa = report.channels.find((c) => c.name === 'tdoa');
    // The pairs with anchor 5 carry the NLOS: their mean NIS is above that of the pairs without it.
    const byId = tdoa?.byId ?? [];
    const mean = (withFive: boolean): number => {
      const sel = byId.filter((b) => b.id.split('-').includes('5') === withFive && b.nis.mean !== undefined);
      return sel.reduce((s, b) => s + (b.nis.mean ?? 0), 0) / sel.length;
    };
    expect(mean(true)).toBeGreaterThan(mean(false));
    // worst is sorted by p and holds only accepted updates of the log's channels.
    const p = report.worst.map((w) => w.p);
    expect(p).toEqual([...p].sort((a, b) => a - b));
    expect(report.worst.length).toBeLessThanOrEqual(100);
  });
});

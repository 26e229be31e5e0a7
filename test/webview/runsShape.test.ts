// Pure shaping of the compare and Monte Carlo views (webview/runsShape.ts). Expected values are worked by hand from
// the inputs written here (no outside figures are involved).
import { describe, expect, it } from 'vitest';
import type { ComparedFigure } from '../../extension/core/compare';
import { alignText, betterCounts, figureGroups, formatDelta, formatFigure, monteCarloRow, overlayColumns, overlayTableRows, runRow, spanText } from '../../webview/runsShape';

const share = (what: string, values: (number | null)[], best?: number): ComparedFigure => ({
  what, unit: '', values, deltas: values.map((v) => (v === null || values[0] === null ? null : v - (values[0] as number))), rule: 'closer', target: 0.95, ...(best !== undefined ? { best } : {}),
});

describe('compare figures', () => {
  const figures: ComparedFigure[] = [
    share('tdoa: NIS inside 95%', [0.948, 0.9114], 0),
    { what: 'tdoa: outliers', unit: '', values: [1, 9], deltas: [0, 8], rule: 'lower', best: 0 },
    { what: 'mag: outliers', unit: '', values: [0, 0], deltas: [0, 0], rule: 'lower' },
    { what: 'position RMSE', unit: 'm', values: [0.6307, 0.6498], deltas: [0, 0.0191], rule: 'lower', best: 0 },
    { what: 'position settling time', unit: 's', values: [null, 2.5], deltas: [null, null], rule: 'lower' },
    { what: 'orientation NEES inside 95%', unit: '', values: [0.5, 0.96], deltas: [0, 0.46], rule: 'closer', target: 0.95, best: 1 },
  ];
  it('groups by channel and error block, in order, with the prefix taken off', () => {
    const g = figureGroups(figures, ['A', 'B']);
    expect(g.map((x) => [x.kind, x.title, x.rows.map((r) => r.what)])).toEqual([
      ['channel', 'tdoa', ['NIS inside 95%', 'outliers']],
      ['channel', 'mag', ['outliers']],
      ['errors', 'position', ['RMSE', 'settling time']],
      ['errors', 'orientation', ['NEES inside 95%']],
    ]);
  });
  it('formats values, differences against A and the better run', () => {
    const [tdoa, mag, position, orientation] = figureGroups(figures, ['A', 'B']);
    expect(tdoa.rows[0]).toMatchObject({ values: ['94.8%', '91.1%'], deltas: ['−3.7 pp'], better: 'A', best: 0, rule: 'closer to 95% is better' });
    expect(tdoa.rows[1]).toMatchObject({ values: ['1', '9'], deltas: ['+8'], better: 'A', rule: 'lower is better' });
    // Both runs have it and neither is better: a tie; only one run has it: no verdict.
    expect(mag.rows[0]).toMatchObject({ deltas: ['±0'], better: 'tie' });
    expect(position.rows[0]).toMatchObject({ values: ['0.6307 m', '0.6498 m'], deltas: ['+0.0191 m'], better: 'A' });
    expect(position.rows[1]).toMatchObject({ values: ['–', '2.5 s'], deltas: ['–'], better: '' });
    expect(orientation.rows[0]).toMatchObject({ better: 'B', deltas: ['+46.0 pp'] });
    expect(betterCounts(figures, 2)).toEqual([3, 1]);
  });
  it('formats single figures', () => {
    expect(formatFigure({ what: 'x: NIS mean', rule: 'closer', target: 3, unit: '' }, 2.75385)).toBe('2.754');
    expect(formatFigure({ what: 'x: NIS mean', rule: 'closer', target: 3, unit: '' }, null)).toBe('–');
    expect(formatDelta({ what: 'velocity RMSE', rule: 'lower', unit: 'm/s' }, -0.25)).toBe('−0.25 m/s');
  });
  it('states the span and the alignment', () => {
    expect(alignText({ by: 'time' })).toBe('by log time');
    expect(alignText({ by: 'event', kind: 'bias-step' })).toBe('by the first bias-step finding');
    expect(spanText({ start: 2, end: 19.99 }, { by: 'start' })).toBe('Figures on the common span 2 s to 19.99 s (17.99 s, aligned by each run’s start).');
    expect(spanText(undefined, { by: 'time' })).toBe('');
    expect(runRow({ label: 'B', name: 'b.csv', sha256: 'd96569cb47c064f5866ea3', offset_s: 1.5, window: [1.5, 21.49], cropped: true })).toEqual(['B', 'b.csv', 'd96569cb47c0', '1.5 s', '1.5 – 21.49 s', 'yes']);
  });
});

describe('overlay columns', () => {
  it('merges the runs onto the union of their times, null where a run has no point', () => {
    const c = overlayColumns({ runs: [{ run: 0, x: [0, 1, 2], y: [10, null, 12] }, { run: 1, x: [1, 1.5, 2], y: [21, 21.5, 22] }] });
    expect(c.x).toEqual([0, 1, 1.5, 2]);
    expect(c.runs).toEqual([0, 1]);
    expect(c.ys).toEqual([[10, null, null, 12], [null, 21, 21.5, 22]]);
    expect(c.points).toBe(6);
    expect(overlayTableRows(c).rows).toEqual([['0', '10', '–'], ['1', '–', '21'], ['1.5', '–', '21.5'], ['2', '12', '22']]);
    expect(overlayTableRows(c, 2)).toEqual({ rows: [['0', '10', '–'], ['1.5', '–', '21.5']], total: 4 });
  });
});

describe('Monte Carlo rows', () => {
  it('names the quantity and states the share and the interval', () => {
    expect(monteCarloRow({ kind: 'nees', name: 'position', dof: 3, epochs: 2000, mean: 3.02, inside95: 0.946, bounds95: [0.9001, 6.3409] })).toEqual(['NEES position', '3', '2000', '3.02', '94.6%', '0.9001 – 6.341']);
    expect(monteCarloRow({ kind: 'nis', name: 'tdoa', dof: 1, epochs: 0 })).toEqual(['NIS tdoa', '1', '0', '–', '–', '–']);
  });
});

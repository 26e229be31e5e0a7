// Pure data shaping of the panel (webview/shape.ts): views, chart kinds, markers, table rows, window arithmetic.
// Expected values are worked by hand from the inputs written here (no outside figures are involved).
import { describe, expect, it } from 'vitest';
import type { Report } from '../../extension/core/report';
import type { SeriesInfo } from '../../extension/protocol';
import {
  runSummary,
  anchorRows,
  centreOn,
  channelRows,
  chartKind,
  equalAspect,
  fileIndexOf,
  findingLabel,
  fitText,
  flattenBlock,
  formatNumber,
  formatPercent,
  gapsToNull,
  groupViews,
  layerName,
  markersFor,
  nearestIndex,
  nextWindow,
  ownChart,
  positiveOrNull,
  tableRows,
  viewOf,
  worstLabel,
  worstOnPath,
  yAxisLabel,
  legendLabel,
} from '../../webview/shape';

function info(key: string, group: string, extra: Partial<SeriesInfo> = {}): SeriesInfo {
  return { key, group, label: key, unit: '1', logLog: false, band: false, xy: false, points: 10, x0: 0, x1: 1, ...extra };
}

describe('views', () => {
  it('groups series by group, known views in order, unknown groups after', () => {
    const series = [info('bias/gyro/x', 'bias'), info('foo/bar', 'custom'), info('nis/tdoa', 'innovations'), info('error/position/x', '')];
    const views = groupViews(series, {});
    expect(views.map((v) => [v.id, v.series.map((s) => s.key)])).toEqual([
      ['overview', []],
      ['innovations', ['nis/tdoa']],
      ['errors', ['error/position/x']],
      ['bias', ['bias/gyro/x']],
      ['custom', ['foo/bar']],
    ]);
    expect(groupViews([], { uwb: { anchors: [] } }).map((v) => v.id)).toEqual(['overview', 'uwb']);
    expect(viewOf({ key: 'mystery', group: ' ' })).toBe('mystery');
  });

  it('tells chart kinds and which series get charts', () => {
    expect([
      chartKind(info('nis/tdoa', 'innovations')),
      chartKind(info('allan/gyro/x', 'allan', { logLog: true })),
      chartKind(info('trajectory/estimate', 'trajectory', { xy: true })),
      chartKind(info('acf/tdoa', 'innovations')),
      chartKind(info('nisPdf/tdoa', 'innovations')),
    ]).toEqual(['time', 'loglog', 'xy', 'plain', 'plain']);
    const hist = new Set(['nis/tdoa']);
    expect([ownChart(info('bias/gyro/x/steps', 'bias'), hist), ownChart(info('nisHistogram/tdoa', ''), hist), ownChart(info('nisHistogram/mag', ''), hist), ownChart(info('bias/gyro/x', ''), hist)]).toEqual([false, false, true, true]);
  });
});

describe('numbers and gaps', () => {
  it('turns NaN into null gaps and non-positive values into null on log axes', () => {
    expect(gapsToNull(new Float64Array([1, NaN, Infinity, -2]))).toEqual([1, null, null, -2]);
    expect(positiveOrNull(new Float64Array([1, 0, -1, NaN, 2e-9]))).toEqual([1, null, null, null, 2e-9]);
  });
  it('formats figures', () => {
    expect([formatNumber(144.2), formatNumber(1e-33, 2), formatNumber(0), formatNumber(undefined), formatNumber(1234567), formatPercent(0.9494), formatPercent(undefined)]).toEqual([
      '144', '1.0e-33', '0', '–', '1.23e+6', '94.9%', '–',
    ]);
  });
});

const report = {
  schema: 'residuum.report/1',
  tool: { version: 't' },
  source: { path: 'run.csv', format: 'csv', rows: 10, files: ['run.csv'] },
  settings: { confidence: 0.95, gate: 0.999, window_s: 5, imuPreset: 'consumer' },
  partial: false,
  time: { epochs: 10 },
  channels: [
    { name: 'tdoa', dof: 1, updates: 100, rejected: 2, outliers: 3, nis: { mean: 1.02, inside95: 0.949 }, whiteness: { lags: 20, ljungBoxP: 0.41 } },
    { name: 'mag', dof: 3, updates: 50, rejected: 0, outliers: 0, nis: { mean: 3.9, inside95: 0.8 } },
    { name: 'gnss', dof: 2, updates: 0, rejected: 0, outliers: 0, nis: {} },
  ],
  bias: { gyro: { steps: [{ t: 90.1, axis: 0, size: 0.02 }, { t: 50, axis: 2, size: 0.01 }, { t: 'bad' }] } },
  uwb: { anchors: [{ id: '5', updates: 1495, nis: { mean: 4.0 }, outliers: 12, suspect: true, reason: 'biased' }, { updates: 3 }, { id: 7, nis: {} }] },
  notes: [],
  findings: [{ kind: 'inconsistent', t: 10, tEnd: 15, channel: 'tdoa', line: 1002, message: 'NIS too high' }],
  worst: [
    { t: 23.41, line: 2343, channel: 'tdoa', id: '4-5', score: 144.2, p: 1e-33 },
    { t: 30, line: 3002, channel: 'mag', score: 20, p: 1e-4 },
    { t: 40, line: 4002, channel: 'tdoa', score: 15, p: 1e-3 },
  ],
} as unknown as Report;

describe('report tables and markers', () => {
  it('builds the channels table with a verdict per channel', () => {
    expect(channelRows(report)).toEqual([
      { name: 'tdoa', dof: '1', updates: '100', rejected: '2', outliers: '3', nisMean: '1.02', inside95: '94.9%', whitenessP: '0.41', verdict: 'ok' },
      { name: 'mag', dof: '3', updates: '50', rejected: '0', outliers: '0', nisMean: '3.9', inside95: '80.0%', whitenessP: '–', verdict: 'low' },
      { name: 'gnss', dof: '2', updates: '0', rejected: '0', outliers: '0', nisMean: '–', inside95: '–', whitenessP: '–', verdict: 'unknown' },
    ]);
  });
  it('marks bias steps on their axis and the worst updates on their channel', () => {
    expect(markersFor('bias/gyro/x', report)).toEqual([90.1]);
    expect(markersFor('bias/gyro/z', report)).toEqual([50]);
    expect(markersFor('bias/accel/x', report)).toEqual([]);
    expect(markersFor('nis/tdoa', report)).toEqual([23.41, 40]);
    expect(markersFor('nis/tdoa', report, 1)).toEqual([23.41]);
    expect(markersFor('error/position/x', report)).toEqual([]);
  });
  it('lists anchors tolerantly', () => {
    expect(anchorRows(report)).toEqual([
      { id: '5', updates: '1495', nisMean: '4', outliers: '12', suspect: true, reason: 'biased' },
      { id: '7', updates: '–', nisMean: '–', outliers: '–', suspect: false, reason: '' },
    ]);
    expect(anchorRows({ uwb: undefined })).toEqual([]);
  });
  it('labels worst entries and findings as text', () => {
    expect(worstLabel(report.worst[0])).toBe('t=23.410 s · tdoa 4-5 · NIS 144 · p=1.0e-33 · line 2343');
    expect(findingLabel(report.findings[0])).toBe('inconsistent · t=10.000 s–15.000 s · NIS too high (line 1002)');
  });
  it('flattens unknown blocks, counting long arrays', () => {
    expect(flattenBlock({ a: 1, b: { c: [1, 2], d: 'x', e: [1, 2, 3, 4, 5, 6, 7, 8, 9] }, f: null, g: [{ h: true }] })).toEqual([
      ['a', '1'],
      ['b.c', '[1, 2]'],
      ['b.d', 'x'],
      ['b.e', '(9 values)'],
      ['g[0].h', 'true'],
    ]);
    expect(flattenBlock({ a: 1, b: 2, c: 3 }, 2)).toHaveLength(2);
  });
  it('finds the file a finding names', () => {
    expect([fileIndexOf({}, ['run.csv', 'run.csv.map.json']), fileIndexOf({ file: '/x/y/run.csv.map.json' }, ['run.csv', 'run.csv.map.json']), fileIndexOf({ file: 'other' }, ['run.csv'])]).toEqual([0, 1, 0]);
  });
});

describe('paths and windows', () => {
  it('finds nearest indices and worst points on a path by line', () => {
    expect([nearestIndex([1, 3, 5], 3.9), nearestIndex([1, 3, 5], 4), nearestIndex([1, 3, 5], 99), nearestIndex([], 1)]).toEqual([1, 1, 2, -1]);
    const marks = worstOnPath(report.worst, [0, 1, 2, 3], [10, 11, 12, 13], [2300, 2400, 3000, 4000]);
    // 2343 is nearer 2300 than 2400; 3002 nearest 3000; 4002 nearest 4000.
    expect(marks).toEqual({ x: [0, 2, 3], y: [10, 12, 13] });
    expect(worstOnPath(report.worst, [0], [0], undefined)).toEqual({ x: [], y: [] });
  });
  it('zooms, pans and clamps windows', () => {
    const extent: [number, number] = [0, 100];
    expect(nextWindow([40, 60], extent, 'zoomIn')).toEqual([45, 55]);
    expect(nextWindow([40, 60], extent, 'zoomOut')).toEqual([30, 70]);
    expect(nextWindow([0, 80], extent, 'zoomOut')).toEqual([0, 100]);
    expect(nextWindow([40, 60], extent, 'panLeft')).toEqual([35, 55]);
    expect(nextWindow([90, 100], extent, 'panRight')).toEqual([90, 100]);
    expect(nextWindow([10, 20], extent, 'reset')).toEqual([0, 100]);
    expect(centreOn([0, 10], extent, 95)).toEqual([90, 100]);
    expect(centreOn([0, 10], extent, 50)).toEqual([45, 55]);
    const inside: [number, number] = [0, 10];
    expect(centreOn(inside, extent, 5)).toBe(inside);
  });
  it('gives equal metres per pixel on both axes', () => {
    const r = equalAspect(0, 40, 0, 10, 400, 200);
    const perPxX = (r.x[1] - r.x[0]) / 400;
    const perPxY = (r.y[1] - r.y[0]) / 200;
    expect(perPxX).toBeCloseTo(perPxY, 12);
    expect(perPxX).toBeCloseTo(0.105, 12);
    expect((r.x[0] + r.x[1]) / 2).toBeCloseTo(20, 12);
  });
  it('builds table rows from drawn points', () => {
    const t = tableRows({ x: [0, 1, 2, 3], y: [1, NaN, 3, 4], line: [2, 3, NaN, 5] }, 2);
    expect(t).toEqual({ rows: [['0', '1', '2'], ['2', '3', '–']], total: 4 });
  });
});

describe('run summary', () => {
  it('lists every file the analysis read', () => {
    const summary = new Map(runSummary({ ...report, source: { ...report.source, files: ['run.csv', 'run.csv.map.json', 'anchors.csv'] } }));
    expect(summary.get('Log')).toBe('run.csv');
    expect(summary.get('Files read')).toBe('run.csv, run.csv.map.json, anchors.csv');
  });
});

describe('legend names', () => {
  it('leave out the description of the band (the heading has it), and keep other labels whole', () => {
    expect(legendLabel('position NEES (3 dof) with the per-epoch 95% band')).toBe('position NEES (3 dof)');
    expect(legendLabel('position error x (true minus estimate) with +-3 sigma')).toBe('position error x (true minus estimate)');
    expect(legendLabel('position NEES window averages with their 95% bounds (effective sample size)')).toBe('position NEES window averages');
    expect(legendLabel('tdoa windowed NIS')).toBe('tdoa windowed NIS');
    expect(legendLabel(' with a leading space only')).toBe(' with a leading space only');
  });
});

describe('axis labels and layer names', () => {
  it('labels a y axis by its unit, else by a short name of the quantity', () => {
    expect(yAxisLabel({ key: 'error/position/x', label: 'position error x (true minus estimate) with +-3 sigma', unit: 'm' })).toBe('[m]');
    expect(yAxisLabel({ key: 'nees/position', label: 'position NEES (3 dof) with the per-epoch 95% band', unit: '1' })).toBe('NEES');
    expect(yAxisLabel({ key: 'nees/position/window', label: 'position NEES window averages', unit: '' })).toBe('NEES');
    expect(yAxisLabel({ key: 'nisWindow/tdoa', label: 'tdoa windowed NIS', unit: '1' })).toBe('NIS');
    expect(yAxisLabel({ key: 'uwb/dop', label: 'PDOP (TDOA, correlated differences)', unit: '1' })).toBe('DOP');
    expect(yAxisLabel({ key: 'uwb/anchorsHeard', label: 'Anchors heard per window', unit: '1' })).toBe('Anchors heard per window');
  });

  // A measure of 7 units per character (a fixed-pitch font), so the expected cuts are counted by hand.
  const mono = (s: string): number => 7 * [...s].length;
  it('fits a label to the room along its axis with an ellipsis', () => {
    expect(fitText('NEES', 100, mono)).toBe('NEES');
    // 70 units hold 10 characters: the 9-character prefix "position " loses its trailing space before the ellipsis
    // ("position…", 9 characters), and the 10-character prefix with it would need 11.
    expect(fitText('position NEES window averages', 70, mono)).toBe('position…');
    expect(fitText('position NEES window averages', 77, mono)).toBe('position N…');
    expect(fitText('position NEES window averages', 84, mono)).toBe('position NE…');
    expect(mono(fitText('Anchors heard per window', 120, mono))).toBeLessThanOrEqual(120);
    expect(fitText('NEES', 6, mono)).toBe('');
  });

  it('names the layers of a planar chart without the axis notes of their labels', () => {
    expect(layerName({ key: 'trajectory/estimate', label: 'estimate from above, x = east (m), y = north (m); points in time order' })).toBe('estimate from above');
    expect(layerName({ key: 'uwb/anchors', label: 'UWB anchors 0, 1, 2 (x = east, y = north)' })).toBe('UWB anchors');
    expect(layerName({ key: 'trajectory/reference', label: 'reference' })).toBe('reference');
    expect(layerName({ key: 'x/y', label: '(unnamed)' })).toBe('x/y');
  });
});

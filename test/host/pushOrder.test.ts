// Which series the host sends envelopes of unasked after `init` (extension/host/seriesStore.ts pushOrder): only those
// the panel draws (extension/protocol.ts isDrawn, the rule webview/main.ts builds its charts by), the view on screen
// first. Expected lists are written out by hand from the inputs; the demo log's series come from the seeded demo
// scene (demo data, not a check of any figure): its five series without a chart are named below.
import { describe, expect, it } from 'vitest';
import path from 'node:path';
import { analyzeFile } from '../../extension/node/analyzeFile';
import { nisHistogram } from '../../extension/host/histogram';
import { SeriesStore, pushOrder } from '../../extension/host/seriesStore';
import type { SeriesInfo } from '../../extension/protocol';

function info(key: string, group: string): SeriesInfo {
  return { key, group, label: key, unit: '1', logLog: false, band: false, xy: false, points: 10, x0: 0, x1: 1 };
}

describe('envelopes sent unasked', () => {
  const infos = [
    info('nis/tdoa', 'innovations'),
    info('nisHistogram/tdoa', 'innovations'),
    info('nisPdf/tdoa', 'innovations'),
    info('nisHistogram/mag', 'innovations'),
    info('bias/gyro/z', 'bias'),
    info('bias/gyro/z/steps', 'bias'),
    info('summary/rate', 'overview'),
    info('error/position/x', ''),
    info('allan/gyro/x', 'allan'),
  ];
  const histograms = new Set(['nis/tdoa']);

  it('leaves out the series no chart draws', () => {
    // nisHistogram/mag stays: channel mag has no host histogram, so the core's own pair is drawn.
    expect(pushOrder(infos, undefined, histograms).map((i) => i.key)).toEqual(['nis/tdoa', 'nisHistogram/mag', 'bias/gyro/z', 'error/position/x', 'allan/gyro/x']);
  });

  it('sends the view on screen first, a series without a group counting in the view its key names', () => {
    expect(pushOrder(infos, 'errors', histograms).map((i) => i.key)).toEqual(['error/position/x', 'nis/tdoa', 'nisHistogram/mag', 'bias/gyro/z', 'allan/gyro/x']);
    expect(pushOrder(infos, 'bias', histograms).map((i) => i.key)).toEqual(['bias/gyro/z', 'nis/tdoa', 'nisHistogram/mag', 'error/position/x', 'allan/gyro/x']);
  });

  it('sends none of the demo log\'s five series without a chart', async () => {
    const { report, series } = await analyzeFile(path.join(__dirname, '..', '..', 'demo', 'warehouse-flight.csv'));
    const store = new SeriesStore(series, 20000);
    // The host's histograms, made as AnalysisPanel.accept makes them.
    const keys = new Set(report.channels.filter((c) => c.dof >= 1 && store.get(`nis/${c.name}`)).map((c) => nisHistogram(`nis/${c.name}`, store.get(`nis/${c.name}`)!.y, c.dof).key));
    expect([...keys].sort()).toEqual(['nis/mag', 'nis/tdoa']);
    const all = store.infos().map((i) => i.key);
    const pushed = pushOrder(store.infos(), undefined, keys).map((i) => i.key);
    const left = all.filter((k) => !pushed.includes(k));
    expect(left.sort()).toEqual(['bias/gyro/z/steps', 'nisHistogram/mag', 'nisHistogram/tdoa', 'nisPdf/mag', 'nisPdf/tdoa']);
    expect(pushed.length).toBe(all.length - 5);
    expect(new Set(pushed).size).toBe(pushed.length);
  });
});

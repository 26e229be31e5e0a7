/**
 * Node side of the harness with a real log: runs the analysis (extension/node/analyzeFile) and answers the page's
 * requests with the real SeriesStore, so the webview is exercised with the series the extension would send.
 * Columns travel to the page as JSON arrays (NaN as null) and become Float64Array buffers there.
 */
import { analyzeFile } from '../../../extension/node/analyzeFile';
import { nisHistogram } from '../../../extension/host/histogram';
import { SeriesStore } from '../../../extension/host/seriesStore';
import type { InitMessage, SeriesRequestMessage } from '../../../extension/protocol';

/** JSON-ready columns: NaN becomes null. */
function column(b: ArrayBuffer | undefined): (number | null)[] | undefined {
  return b ? Array.from(new Float64Array(b), (v) => (Number.isFinite(v) ? v : null)) : undefined;
}

/** Analyse `path`; returns the init message and a request handler. */
export async function realHost(path: string): Promise<{ init: InitMessage; answer: (r: SeriesRequestMessage) => unknown }> {
  const { report, series } = await analyzeFile(path);
  const store = new SeriesStore(series, 20000);
  const histograms = report.channels
    .map((c) => ({ c, s: store.get(`nis/${c.name}`) }))
    .filter((e) => e.s !== undefined && e.c.dof >= 1)
    .map((e) => nisHistogram(`nis/${e.c.name}`, e.s!.y, e.c.dof));
  const init: InitMessage = {
    type: 'init', revision: 1, uri: `file://${path}`, logName: path.split('/').pop() ?? path, files: [path],
    report, series: store.infos(), histograms, view: {},
  };
  const answer = (r: SeriesRequestMessage): unknown => {
    const a = store.answer(r);
    return { ...a, x: column(a.x), y: column(a.y), lo: column(a.lo), hi: column(a.hi), line: column(a.line) };
  };
  return { init, answer };
}

/**
 * The host's copy of a run's series and the answers to the webview's window queries. Pure (no `vscode`), so the
 * panel's data path is unit-tested without an editor.
 *
 * Time series (ascending x) are answered with a min/max envelope of the requested window, read from a min/max
 * pyramid built on the series' first query (core/envelopeIndex.ts: O(pixels) per query, not O(points)); series
 * whose x is not time (a trajectory seen from above, anchor positions) are thinned by a stride to `maxXyPoints`.
 */
import { isAscending, stride, type Envelope } from '../core/envelope';
import { buildEnvelopeIndex, envelopeIndexed, type EnvelopeIndex } from '../core/envelopeIndex';
import type { Series } from '../core/series';
import { isDrawn, viewOf, type SeriesInfo, type SeriesRequestMessage, type SeriesResponseMessage } from '../protocol';

/**
 * Series drawn as planar (x, y) paths rather than over time: the trajectory seen from above, anchor positions, and
 * anything whose x is not ascending (a group name alone does not decide: `uwb/fix/x` is in the trajectory group
 * but runs over time).
 */
function isPlanar(series: Series): boolean {
  return series.key.startsWith('trajectory/') || series.key === 'uwb/anchors' || !isAscending(series.x, Math.min(series.x.length, series.y.length));
}

function finiteRange(x: Float64Array, n: number): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < n; i++) {
    const v = x[i];
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return lo === Infinity ? [NaN, NaN] : [lo, hi];
}

/** Exact-size ArrayBuffer holding a column's values (a view over part of a larger buffer is copied). */
export function toArrayBuffer(a: Float64Array): ArrayBuffer {
  if (a.byteOffset === 0 && a.byteLength === a.buffer.byteLength && a.buffer instanceof ArrayBuffer) return a.buffer;
  return a.slice().buffer as ArrayBuffer;
}

/** Holds the series of one analysis and answers window queries. */
export class SeriesStore {
  private readonly byKey = new Map<string, { series: Series; info: SeriesInfo; index?: EnvelopeIndex }>();

  /** Keep `series` (later duplicates of a key are dropped). `maxXyPoints` caps planar paths. */
  constructor(series: readonly Series[], private readonly maxXyPoints = 20000) {
    for (const s of series) {
      if (this.byKey.has(s.key)) continue;
      const n = Math.min(s.x.length, s.y.length);
      const [x0, x1] = finiteRange(s.x, n);
      this.byKey.set(s.key, {
        series: s,
        info: {
          key: s.key,
          group: s.group,
          label: s.label,
          unit: s.unit,
          logLog: s.logLog === true,
          band: s.lo !== undefined || s.hi !== undefined,
          xy: isPlanar(s),
          points: n,
          x0,
          x1,
        },
      });
    }
  }

  /** Descriptions of every series, in the order given. */
  infos(): SeriesInfo[] {
    return [...this.byKey.values()].map((e) => e.info);
  }

  /** The series under `key`, if held. */
  get(key: string): Series | undefined {
    return this.byKey.get(key)?.series;
  }

  /** The envelope answering `request` (an `error` and empty columns for an unknown key). */
  answer(request: SeriesRequestMessage): SeriesResponseMessage {
    const entry = this.byKey.get(request.key);
    if (!entry) {
      const empty = new ArrayBuffer(0);
      return { type: 'series/response', id: request.id, key: request.key, x: empty, y: empty, inWindow: 0, error: `no series "${request.key}"` };
    }
    const { series, info } = entry;
    let env: Envelope;
    if (info.xy) env = stride(series, this.maxXyPoints, info.points);
    else {
      const t0 = request.t0 ?? info.x0;
      const t1 = request.t1 ?? info.x1;
      if (Number.isFinite(t0) && Number.isFinite(t1)) {
        entry.index ??= buildEnvelopeIndex(series, info.points);
        env = envelopeIndexed(series, entry.index, t0, t1, request.widthPx);
      } else env = stride(series, 0, 0);
    }
    const response: SeriesResponseMessage = {
      type: 'series/response',
      id: request.id,
      key: request.key,
      x: toArrayBuffer(env.x),
      y: toArrayBuffer(env.y),
      inWindow: env.inWindow,
    };
    if (env.lo) response.lo = toArrayBuffer(env.lo);
    if (env.hi) response.hi = toArrayBuffer(env.hi);
    if (env.line && request.line !== false) response.line = toArrayBuffer(env.line);
    return response;
  }
}

/**
 * The series whose first envelopes the host sends after `init` unasked, in sending order: only those the panel draws
 * ({@link isDrawn}: not the step series drawn as markers, not the NIS histogram/density pairs replaced by the host's
 * histograms, nothing of a view without charts), those of the view on screen (`shownView`, default the overview)
 * first. `histogramKeys` are the NIS keys the host made histograms for (`InitMessage.histograms`).
 */
export function pushOrder(infos: readonly SeriesInfo[], shownView: string | undefined, histogramKeys: ReadonlySet<string>): SeriesInfo[] {
  const drawn = infos.filter((i) => isDrawn(i, histogramKeys));
  const shown = shownView ?? 'overview';
  return [...drawn.filter((i) => viewOf(i) === shown), ...drawn.filter((i) => viewOf(i) !== shown)];
}

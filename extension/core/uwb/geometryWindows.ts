/**
 * Anchor geometry along the trajectory: the time axis is cut into windows (1 s by default); in each window the
 * anchors heard (any update or raw record naming them) and the position at the window centre give a DOP.
 *
 * - TDOA model: {@link tdoaDop} with correlated differences; a 3-D fix needs 4 anchors (3 independent differences).
 * - Range model: {@link rangeDop}; 3 anchors (a 3-D fix up to a mirror ambiguity).
 * A window with fewer anchors (with known positions) is `too few`; one whose normal matrix is singular is `singular`.
 * Both count as undefined DOP and are never averaged into the median. A window where the position is unknown is
 * left out.
 */
import { rangeDop, tdoaDop } from './dop';
import type { LinkTable } from './collect';
import type { Vec3_m } from './vec3';

/** Window state codes. */
export const WINDOW_OK = 0;
/** Fewer anchors heard than a 3-D fix needs. */
export const WINDOW_TOO_FEW = 1;
/** Enough anchors but singular geometry (undefined DOP). */
export const WINDOW_SINGULAR = 2;
/** Position unknown at the window centre. */
export const WINDOW_NO_POSITION = 3;

/** A time-stamped set of link events (updates or raw records). */
export interface LinkEvents {
  t_s: Float64Array;
  link: Int32Array;
  length: number;
}

/** An interval of consecutive windows sharing a problem. */
export interface GeometryInterval {
  kind: 'too-few-anchors' | 'high-dop';
  t_s: number;
  tEnd_s: number;
  /** Fewest anchors heard in the interval. */
  minHeard: number;
  /** Largest defined DOP in the interval (absent when all were undefined). */
  maxDop?: number;
  /** Windows with undefined (singular) DOP inside a high-dop interval. */
  singular: number;
}

/** Result of {@link geometryWindows}. */
export interface GeometryWindowsResult {
  window_s: number;
  /** Series abscissa: centres of the windows holding events, plus one point inside each run of empty windows. */
  center_s: Float64Array;
  /** Anchors with a position heard, per series point. */
  heard: Float64Array;
  /** PDOP per series point (NaN where undefined or empty). */
  dop: Float64Array;
  /** State code per window holding events (WINDOW_*). */
  state: Uint8Array;
  summary: { windows: number; median?: number; max?: number; undefined: number; tooFewAnchors: number; singular: number; aboveThreshold: number; noPosition: number };
  intervals: GeometryInterval[];
}

/** Set the bits of the anchors of each event of `e` in its window's slot of `dense` (and mark the window in `hit`). */
function markEvents(
  e: LinkEvents, t0: number, w: number, la: Int32Array, lb: Int32Array, words: number, dense: Uint32Array, hit: Uint8Array,
): void {
  const t_s = e.t_s;
  const link = e.link;
  for (let k = 0; k < e.length; k++) {
    const L = link[k];
    const t = t_s[k];
    if (L < 0 || !(t - t === 0)) continue; // no link, or time not finite
    const bin = Math.floor((t - t0) / w);
    hit[bin] = 1;
    const o = bin * words;
    const a = la[L], b = lb[L];
    if (a >= 0) dense[o + (a >>> 5)] |= 1 << (a & 31);
    if (b >= 0) dense[o + (b >>> 5)] |= 1 << (b & 31);
  }
}

/**
 * DOP per window. `positionAt` gives positions at the window centres (NaN where unknown); `maxDop` is the
 * high-dop threshold. Only windows holding at least one event are evaluated; the empty windows between them are
 * counted as too-few-anchors windows (0 anchors heard) without being materialised, so a stray time stamp far from
 * the rest cannot blow up the cost. The series carry one NaN point inside each run of empty windows.
 */
export function geometryWindows(
  events: readonly LinkEvents[],
  links: LinkTable,
  positions: readonly (Vec3_m | undefined)[],
  model: 'tdoa' | 'range',
  positionAt: (t_s: Float64Array) => { x: Float64Array; y: Float64Array; z: Float64Array },
  window_s: number,
  maxDop: number,
): GeometryWindowsResult | undefined {
  let t0 = Infinity;
  let tMax = -Infinity;
  let total = 0;
  for (const e of events) {
    for (let k = 0; k < e.length; k++) {
      const t = e.t_s[k];
      if (Number.isFinite(t) && e.link[k] >= 0) {
        if (t < t0) t0 = t;
        if (t > tMax) tMax = t;
        total++;
      }
    }
  }
  if (!Number.isFinite(t0)) return undefined;
  const w = window_s > 0 ? window_s : 1;
  const nA = positions.length;
  const words = Math.max(1, Math.ceil(nA / 32));
  const la = Int32Array.from(links.a);
  const lb = Int32Array.from(links.b);
  // anchors heard per occupied window: a bit set of `words` words per window, windows in ascending order
  let bins: number[];
  let packed: Uint32Array;
  const span = Math.floor((tMax - t0) / w) + 1; // bins are floor((t - t0) / w), monotone in t: all within [0, span)
  if (span <= 4 * total + 1024) {
    // dense: one slot per window of the span (a typed-array store per event instead of a Map lookup)
    const dense = new Uint32Array(span * words);
    const hit = new Uint8Array(span);
    for (const e of events) markEvents(e, t0, w, la, lb, words, dense, hit);
    bins = [];
    for (let b = 0; b < span; b++) if (hit[b]) bins.push(b);
    packed = new Uint32Array(bins.length * words);
    for (let k = 0; k < bins.length; k++) for (let q = 0; q < words; q++) packed[k * words + q] = dense[bins[k] * words + q];
  } else {
    // a stray time stamp far from the rest: only the occupied windows are kept
    const occupied = new Map<number, Uint32Array>();
    for (const e of events) {
      for (let k = 0; k < e.length; k++) {
        const L = e.link[k];
        const t = e.t_s[k];
        if (L < 0 || !Number.isFinite(t)) continue;
        const bin = Math.floor((t - t0) / w);
        let bits = occupied.get(bin);
        if (!bits) {
          bits = new Uint32Array(words);
          occupied.set(bin, bits);
        }
        const a = la[L], b = lb[L];
        if (a >= 0) bits[a >>> 5] |= 1 << (a & 31);
        if (b >= 0) bits[b >>> 5] |= 1 << (b & 31);
      }
    }
    bins = [...occupied.keys()].sort((x, y) => x - y);
    packed = new Uint32Array(bins.length * words);
    for (let k = 0; k < bins.length; k++) packed.set(occupied.get(bins[k]) as Uint32Array, k * words);
  }
  const nb = bins.length;
  const center = new Float64Array(nb);
  for (let k = 0; k < nb; k++) center[k] = t0 + (bins[k] + 0.5) * w;
  const pos = positionAt(center);
  const heard = new Float64Array(nb);
  const dop = new Float64Array(nb).fill(NaN);
  const state = new Uint8Array(nb);
  const need = model === 'tdoa' ? 4 : 3;
  const values: number[] = [];
  let tooFew = 0;
  let singular = 0;
  let noPosition = 0;
  let above = 0;
  for (let k = 0; k < nb; k++) {
    const o = k * words;
    const seen: Vec3_m[] = [];
    for (let a = 0; a < nA; a++) {
      if (packed[o + (a >>> 5)] & (1 << (a & 31))) {
        const p = positions[a];
        if (p) seen.push(p);
      }
    }
    heard[k] = seen.length;
    const p: Vec3_m = [pos.x[k], pos.y[k], pos.z[k]];
    if (seen.length < need) {
      state[k] = WINDOW_TOO_FEW;
      tooFew++;
      continue;
    }
    if (!p.every(Number.isFinite)) {
      state[k] = WINDOW_NO_POSITION;
      noPosition++;
      continue;
    }
    const d = model === 'tdoa' ? tdoaDop(seen, p) : rangeDop(seen, p);
    if (!d) {
      state[k] = WINDOW_SINGULAR;
      singular++;
      continue;
    }
    dop[k] = d.pdop;
    values.push(d.pdop);
    if (d.pdop > maxDop) above++;
  }
  // Empty windows between occupied ones: 0 anchors heard.
  let empty = 0;
  for (let k = 1; k < nb; k++) empty += bins[k] - bins[k - 1] - 1;
  tooFew += empty;
  values.sort((x, y) => x - y);
  const n = values.length;
  const summary: GeometryWindowsResult['summary'] = {
    windows: nb + empty,
    undefined: tooFew + singular,
    tooFewAnchors: tooFew,
    singular,
    aboveThreshold: above,
    noPosition,
  };
  if (n > 0) {
    summary.median = n % 2 ? values[(n - 1) / 2] : 0.5 * (values[n / 2 - 1] + values[n / 2]);
    summary.max = values[n - 1];
  }
  // Merge consecutive windows (occupied, and the empty runs between them) into intervals.
  const intervals: GeometryInterval[] = [];
  let open: GeometryInterval | undefined;
  const visit = (kind: GeometryInterval['kind'] | undefined, tStart: number, tEnd: number, heardHere: number, dopHere: number, isSingular: boolean): void => {
    if (open && open.kind !== kind) {
      intervals.push(open);
      open = undefined;
    }
    if (!kind) return;
    if (!open) open = { kind, t_s: tStart, tEnd_s: tEnd, minHeard: heardHere, singular: 0 };
    open.tEnd_s = tEnd;
    open.minHeard = Math.min(open.minHeard, heardHere);
    if (isSingular) open.singular++;
    else if (Number.isFinite(dopHere)) open.maxDop = Math.max(open.maxDop ?? 0, dopHere);
  };
  const seriesX: number[] = [];
  const seriesDop: number[] = [];
  const seriesHeard: number[] = [];
  for (let k = 0; k < nb; k++) {
    if (k > 0 && bins[k] - bins[k - 1] > 1) {
      visit('too-few-anchors', t0 + (bins[k - 1] + 1) * w, t0 + bins[k] * w, 0, NaN, false);
      seriesX.push(t0 + 0.5 * (bins[k - 1] + 1 + bins[k]) * w);
      seriesDop.push(NaN);
      seriesHeard.push(0);
    }
    const kind: GeometryInterval['kind'] | undefined =
      state[k] === WINDOW_TOO_FEW ? 'too-few-anchors' : state[k] === WINDOW_SINGULAR || (state[k] === WINDOW_OK && dop[k] > maxDop) ? 'high-dop' : undefined;
    visit(kind, t0 + bins[k] * w, t0 + (bins[k] + 1) * w, heard[k], dop[k], state[k] === WINDOW_SINGULAR);
    seriesX.push(center[k]);
    seriesDop.push(dop[k]);
    seriesHeard.push(heard[k]);
  }
  if (open) intervals.push(open);
  return {
    window_s: w,
    center_s: Float64Array.from(seriesX),
    heard: Float64Array.from(seriesHeard),
    dop: Float64Array.from(seriesDop),
    state,
    summary,
    intervals,
  };
}

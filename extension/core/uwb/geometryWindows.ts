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
  center_s: Float64Array;
  heard: Float64Array;
  dop: Float64Array;
  state: Uint8Array;
  summary: { windows: number; median?: number; max?: number; undefined: number; tooFewAnchors: number; singular: number; aboveThreshold: number; noPosition: number };
  intervals: GeometryInterval[];
}

/** Most windows: beyond it the window is widened so that a long log keeps a bounded cost. */
const MAX_WINDOWS = 2_000_000;

/**
 * DOP per window. `positionAt` gives positions at the window centres (NaN where unknown); `maxDop` is the
 * high-dop threshold.
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
  let t1 = -Infinity;
  for (const e of events) {
    for (let k = 0; k < e.length; k++) {
      const t = e.t_s[k];
      if (!Number.isFinite(t) || e.link[k] < 0) continue;
      if (t < t0) t0 = t;
      if (t > t1) t1 = t;
    }
  }
  if (!(t1 >= t0)) return undefined;
  let w = window_s > 0 ? window_s : 1;
  if ((t1 - t0) / w + 1 > MAX_WINDOWS) w = (t1 - t0) / (MAX_WINDOWS - 1);
  const nb = Math.floor((t1 - t0) / w) + 1;
  const nA = positions.length;
  const words = Math.max(1, Math.ceil(nA / 32));
  const bits = new Uint32Array(nb * words);
  const mark = (bin: number, a: number): void => {
    if (a >= 0) bits[bin * words + (a >>> 5)] |= 1 << (a & 31);
  };
  for (const e of events) {
    for (let k = 0; k < e.length; k++) {
      const L = e.link[k];
      const t = e.t_s[k];
      if (L < 0 || !Number.isFinite(t)) continue;
      const bin = Math.min(nb - 1, Math.floor((t - t0) / w));
      mark(bin, links.a[L]);
      mark(bin, links.b[L]);
    }
  }
  const center = new Float64Array(nb);
  for (let b = 0; b < nb; b++) center[b] = t0 + (b + 0.5) * w;
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
  for (let b = 0; b < nb; b++) {
    const seen: Vec3_m[] = [];
    for (let a = 0; a < nA; a++) {
      if (bits[b * words + (a >>> 5)] & (1 << (a & 31))) {
        const p = positions[a];
        if (p) seen.push(p);
      }
    }
    heard[b] = seen.length;
    const p: Vec3_m = [pos.x[b], pos.y[b], pos.z[b]];
    if (seen.length < need) {
      state[b] = WINDOW_TOO_FEW;
      tooFew++;
      continue;
    }
    if (!p.every(Number.isFinite)) {
      state[b] = WINDOW_NO_POSITION;
      noPosition++;
      continue;
    }
    const d = model === 'tdoa' ? tdoaDop(seen, p) : rangeDop(seen, p);
    if (!d) {
      state[b] = WINDOW_SINGULAR;
      singular++;
      continue;
    }
    dop[b] = d.pdop;
    values.push(d.pdop);
    if (d.pdop > maxDop) above++;
  }
  values.sort((x, y) => x - y);
  const n = values.length;
  const summary: GeometryWindowsResult['summary'] = {
    windows: nb,
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
  // Merge consecutive windows into intervals: too few anchors; DOP above the threshold or singular.
  const intervals: GeometryInterval[] = [];
  let open: GeometryInterval | undefined;
  for (let b = 0; b < nb; b++) {
    const kind: GeometryInterval['kind'] | undefined =
      state[b] === WINDOW_TOO_FEW ? 'too-few-anchors' : state[b] === WINDOW_SINGULAR || (state[b] === WINDOW_OK && dop[b] > maxDop) ? 'high-dop' : undefined;
    if (open && open.kind !== kind) {
      intervals.push(open);
      open = undefined;
    }
    if (!kind) continue;
    const tStart = t0 + b * w;
    const tEnd = Math.min(t1, t0 + (b + 1) * w);
    if (!open) open = { kind, t_s: Math.max(t0, tStart), tEnd_s: tEnd, minHeard: heard[b], singular: 0 };
    open.tEnd_s = tEnd;
    open.minHeard = Math.min(open.minHeard, heard[b]);
    if (state[b] === WINDOW_SINGULAR) open.singular++;
    else if (Number.isFinite(dop[b])) open.maxDop = Math.max(open.maxDop ?? 0, dop[b]);
  }
  if (open) intervals.push(open);
  return { window_s: w, center_s: center, heard, dop, state, summary, intervals };
}

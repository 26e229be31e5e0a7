/**
 * Checks made once the records are in: time going backwards and gaps, judged per stream (the state records, the
 * reference, each channel's updates, raw IMU / TDOA / ranges) and per file segment of a stream.
 * A gap is a step longer than {@link GAP_FACTOR} times the stream's median positive step.
 */
import type { Diagnostic } from '../model';
import type { StreamBuilder } from './builder';
import { medianInPlace } from '../stats/median';

/** A step longer than this many median steps is a `time-gap`. */
export const GAP_FACTOR = 5;
/** Findings of each kind listed per stream before one summary line. */
export const TIME_FINDINGS_CAP = 20;

/**
 * Time checks of one stream; `what` names it in messages ("state records", "channel tdoa"...).
 * The passes over the records are small functions of one loop each ({@link positiveSteps}, {@link timeAnomalies}):
 * the engine compiles each loop on its own, where one function with both loops was compiled once per loop and again
 * for every later stream (six compilations of the whole function on the benchmark log).
 */
export function timeChecks(b: StreamBuilder, what: string, files: string[], channel?: string, maxGapSteps = GAP_FACTOR): Diagnostic[] {
  const out: Diagnostic[] = [];
  const segs = b.segments;
  const hits = new Int32Array(2 * TIME_FINDINGS_CAP);
  const counts = new Int32Array(3);
  for (let k = 0; k < segs.length; k++) {
    const start = segs[k].start;
    const end = k + 1 < segs.length ? segs[k + 1].start : b.length;
    const file = files[segs[k].file] ?? '';
    const t = b.t, line = b.line;
    const steps = new Float64Array(Math.max(0, end - start - 1));
    const med = medianInPlace(steps, positiveSteps(t, start, end, steps));
    timeAnomalies(t, start, end, med > 0 ? maxGapSteps * med : Infinity, TIME_FINDINGS_CAP, hits, counts);
    const mk = (kind: 'time-backwards' | 'time-gap', i: number, message: string): Diagnostic => {
      const d: Diagnostic = { severity: 'warning', kind, file, line: line[i], t: t[i], message };
      if (channel !== undefined) d.channel = channel;
      return d;
    };
    for (let h = 0; h < counts[2]; h++) {
      const i = hits[h];
      const d = t[i] - t[i - 1];
      if (d < 0) {
        out.push(mk('time-backwards', i,
          `Time goes backwards in the ${what}: ${fmt(t[i])} s after ${fmt(t[i - 1])} s (line ${line[i - 1]}), ${fmt(-d)} s earlier.`));
      } else {
        out.push(mk('time-gap', i,
          `Gap of ${fmt(d)} s in the ${what} before this record (${(d / med).toFixed(1)} times the median step of ${fmt(med)} s).`));
      }
    }
    const summary = (n: number, kind: 'time-backwards' | 'time-gap', words: string): void => {
      if (n <= TIME_FINDINGS_CAP) return;
      const d: Diagnostic = { severity: 'warning', kind, file, line: 0,
        message: `${n - TIME_FINDINGS_CAP} more ${words} in the ${what} not listed (${n} in all).` };
      if (channel !== undefined) d.channel = channel;
      out.push(d);
    };
    summary(counts[0], 'time-backwards', 'places where time goes backwards');
    summary(counts[1], 'time-gap', 'time gaps');
  }
  return out;
}

/** The positive steps t[i] - t[i - 1] of records [start, end), in order, into `steps`; returns how many. */
function positiveSteps(t: Float64Array, start: number, end: number, steps: Float64Array): number {
  let ns = 0;
  for (let i = start + 1; i < end; i++) {
    const d = t[i] - t[i - 1];
    if (d > 0) steps[ns++] = d;
  }
  return ns;
}

/**
 * Records of [start, end) whose step from the one before goes backwards (negative) or exceeds `gapLimit`: counts of
 * each kind into counts[0] (backwards) and counts[1] (gaps), and the records of the first `cap` of each kind, in
 * record order, into `hits` (length 2 * cap), their number into counts[2].
 */
function timeAnomalies(t: Float64Array, start: number, end: number, gapLimit: number, cap: number, hits: Int32Array,
  counts: Int32Array): void {
  let back = 0, gaps = 0, listed = 0;
  for (let i = start + 1; i < end; i++) {
    const d = t[i] - t[i - 1];
    if (d < 0) {
      if (++back <= cap) hits[listed++] = i;
    } else if (d > gapLimit) {
      if (++gaps <= cap) hits[listed++] = i;
    }
  }
  counts[0] = back; counts[1] = gaps; counts[2] = listed;
}

function fmt(x: number): string {
  if (!Number.isFinite(x)) return String(x);
  if (Math.abs(x) >= 1e5) return x.toFixed(3);
  return Number(x.toPrecision(6)).toString();
}

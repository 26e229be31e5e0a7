/**
 * Checks made once the records are in: time going backwards and gaps, judged per stream (the state records, the
 * reference, each channel's updates, raw IMU / TDOA / ranges) and per file segment of a stream.
 * A gap is a step longer than {@link GAP_FACTOR} times the stream's median positive step.
 */
import type { Diagnostic } from '../model';
import type { StreamBuilder } from './builder';

/** A step longer than this many median steps is a `time-gap`. */
export const GAP_FACTOR = 5;
/** Findings of each kind listed per stream before one summary line. */
export const TIME_FINDINGS_CAP = 20;

/**
 * Median of `values` (no NaN), which it reorders in place: Hoare's selection (expected linear time) instead of a full
 * sort, since only the middle order statistics are needed; the result is the same as sorting would give.
 */
export function medianInPlace(values: Float64Array): number {
  const n = values.length;
  if (n === 0) return NaN;
  const m = n >> 1;
  select(values, m);
  if (n % 2) return values[m];
  // values[0, m) now hold the m smallest: the lower middle is their largest.
  let lower = values[0];
  for (let i = 1; i < m; i++) if (values[i] > lower) lower = values[i];
  return 0.5 * (lower + values[m]);
}

/** Reorder `a` so that a[k] is its k-th smallest value, smaller or equal ones before it and larger or equal after. */
function select(a: Float64Array, k: number): void {
  let lo = 0;
  let hi = a.length - 1;
  while (hi > lo) {
    // median of three as the pivot
    const mid = (lo + hi) >> 1;
    const x = a[lo], y = a[mid], z = a[hi];
    const pivot = x < y ? (y < z ? y : x < z ? z : x) : (x < z ? x : y < z ? z : y);
    let i = lo, j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        const t = a[i]; a[i] = a[j]; a[j] = t;
        i++; j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return;
  }
}

/** Time checks of one stream; `what` names it in messages ("state records", "channel tdoa"...). */
export function timeChecks(b: StreamBuilder, what: string, files: string[], channel?: string, maxGapSteps = GAP_FACTOR): Diagnostic[] {
  const out: Diagnostic[] = [];
  const segs = b.segments;
  for (let k = 0; k < segs.length; k++) {
    const start = segs[k].start;
    const end = k + 1 < segs.length ? segs[k + 1].start : b.length;
    const file = files[segs[k].file] ?? '';
    const t = b.t, line = b.line;
    const steps = new Float64Array(Math.max(0, end - start - 1));
    let ns = 0;
    for (let i = start + 1; i < end; i++) {
      const d = t[i] - t[i - 1];
      if (d > 0) steps[ns++] = d;
    }
    const med = medianInPlace(steps.subarray(0, ns));
    let back = 0, gaps = 0;
    const mk = (kind: 'time-backwards' | 'time-gap', i: number, message: string): Diagnostic => {
      const d: Diagnostic = { severity: 'warning', kind, file, line: line[i], t: t[i], message };
      if (channel !== undefined) d.channel = channel;
      return d;
    };
    for (let i = start + 1; i < end; i++) {
      const d = t[i] - t[i - 1];
      if (d < 0) {
        if (++back <= TIME_FINDINGS_CAP) {
          out.push(mk('time-backwards', i,
            `Time goes backwards in the ${what}: ${fmt(t[i])} s after ${fmt(t[i - 1])} s (line ${line[i - 1]}), ${fmt(-d)} s earlier.`));
        }
      } else if (med > 0 && d > maxGapSteps * med) {
        if (++gaps <= TIME_FINDINGS_CAP) {
          out.push(mk('time-gap', i,
            `Gap of ${fmt(d)} s in the ${what} before this record (${(d / med).toFixed(1)} times the median step of ${fmt(med)} s).`));
        }
      }
    }
    const summary = (n: number, kind: 'time-backwards' | 'time-gap', words: string): void => {
      if (n <= TIME_FINDINGS_CAP) return;
      const d: Diagnostic = { severity: 'warning', kind, file, line: 0,
        message: `${n - TIME_FINDINGS_CAP} more ${words} in the ${what} not listed (${n} in all).` };
      if (channel !== undefined) d.channel = channel;
      out.push(d);
    };
    summary(back, 'time-backwards', 'places where time goes backwards');
    summary(gaps, 'time-gap', 'time gaps');
  }
  return out;
}

function fmt(x: number): string {
  if (!Number.isFinite(x)) return String(x);
  if (Math.abs(x) >= 1e5) return x.toFixed(3);
  return Number(x.toPrecision(6)).toString();
}

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

/** Median of `values`, which it sorts in place. */
function medianInPlace(values: Float64Array): number {
  if (values.length === 0) return NaN;
  const s = values.sort();
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
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

/**
 * Re-anchoring notes to a log. A note is attached to the record nearest its time, within half a median step of the
 * stream it names: the note's channel (and only the updates with its update id, when it has one), else the state
 * epochs (a channel name that is not a measurement channel, such as `position` for an error block, also means the
 * state epochs). A time-range note is attached to the first record inside its range when no record is near its
 * start. Notes whose epoch no longer exists are kept and marked detached with the reason, never dropped.
 *
 * Line numbers are never stored in a note: they are found here, each time the log is read, so a regenerated log
 * with rows inserted before a noted epoch puts the note on its new line.
 */
import type { Channel, NavLog, Stream } from '../model';
import type { Note } from './sidecar';

/** What anchoring needs of a log: a `NavLog` has it, and so has the quick index of a log's text (lineIndex.ts). */
export interface AnchorLog {
  state: Stream;
  channels: readonly (Stream & Pick<Channel, 'name' | 'id' | 'ids'>)[];
  files: readonly string[];
}

/** A note placed on a log: the line it attaches to, or detached. */
export interface AnchoredNote extends Note {
  /** 1-based line of the record it attaches to, when attached. */
  line?: number;
  /** File of that record. */
  file?: string;
  /** Time of that record, seconds (may differ from `t` by up to half a step). */
  t_anchor?: number;
  detached: boolean;
  /** Why a note is detached, one plain sentence. */
  reason?: string;
}

/** First index in [0, n) whose time is >= target (n when none); assumes ascending time, NaN sorts last. */
function lowerBound(t: Float64Array, n: number, target: number): number {
  let lo = 0;
  let hi = n;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (t[mid] < target) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * Index of the accepted record nearest `target` within `tolerance` (-1 when none). Walks outward from the insertion
 * point and stops once both sides are beyond the tolerance, so a sparse update id far from its neighbours is still
 * found, and the walk stays short.
 */
function nearestWithin(t: Float64Array, n: number, target: number, tolerance: number, accept?: (i: number) => boolean): number {
  const start = lowerBound(t, n, target);
  let best = -1;
  let bestD = Infinity;
  for (let k = start; k < n; k++) {
    const d = t[k] - target;
    if (d > tolerance) break;
    if (accept && !accept(k)) continue;
    if (Math.abs(d) < bestD) {
      bestD = Math.abs(d);
      best = k;
    }
    break;
  }
  for (let k = start - 1; k >= 0; k--) {
    const d = target - t[k];
    if (d > tolerance) break;
    if (accept && !accept(k)) continue;
    if (d < bestD) best = k;
    break;
  }
  return best;
}

/** First accepted record with time in [t0, t1] (-1 when none). */
function firstInside(t: Float64Array, n: number, t0: number, t1: number, accept?: (i: number) => boolean): number {
  for (let k = lowerBound(t, n, t0); k < n && t[k] <= t1; k++) if (!accept || accept(k)) return k;
  return -1;
}

function medianDt(s: Stream): number {
  const n = s.length;
  if (n < 2) return 0;
  const stride = Math.max(1, Math.floor(n / 2000));
  const d: number[] = [];
  for (let i = stride; i < n; i += stride) {
    const x = s.t_s[i] - s.t_s[i - 1];
    if (x > 0) d.push(x);
  }
  d.sort((a, b) => a - b);
  return d.length ? d[d.length >> 1] : 0;
}

function fileOf(log: AnchorLog, s: Stream, i: number): string {
  if (s.fileIndex) return log.files[s.fileIndex[i]] ?? s.file;
  return s.file;
}

/** Attach every note to the log (see the file comment for the rule). Never throws; notes keep their order. */
export function anchorNotes(notes: readonly Note[], log: AnchorLog | NavLog): AnchoredNote[] {
  const tolerances = new Map<Stream, number>();
  const toleranceOf = (s: Stream): number => {
    let v = tolerances.get(s);
    if (v === undefined) {
      v = Math.max(1e-9, 0.5 * medianDt(s)) + 1e-9;
      tolerances.set(s, v);
    }
    return v;
  };
  return notes.map((note): AnchoredNote => {
    let stream: Stream = log.state;
    let accept: ((i: number) => boolean) | undefined;
    const ch = note.channel !== undefined ? log.channels.find((c) => c.name === note.channel) : undefined;
    if (ch) {
      stream = ch;
      if (note.updateId !== undefined) {
        const idIndex = ch.ids.indexOf(note.updateId);
        if (idIndex < 0) return { ...note, detached: true, reason: `channel ${ch.name} has no update with id ${note.updateId} in this log` };
        accept = (i) => ch.id[i] === idIndex;
      }
    } else if (note.channel !== undefined && note.updateId !== undefined) {
      return { ...note, detached: true, reason: `this log has no channel ${note.channel}` };
    }
    if (stream.length === 0) {
      // A log with updates but no state records: any channel's record will do for a note on an epoch.
      const other = !ch ? log.channels.find((c) => c.length > 0) : undefined;
      if (!other) return { ...note, detached: true, reason: ch ? `channel ${ch.name} has no updates in this log` : 'this log has no epochs' };
      stream = other;
    }
    // A note on one update id: the tolerance is that of the id's own records, a few channel steps apart.
    const tolerance = toleranceOf(stream) * (accept ? 4 : 1);
    let i = nearestWithin(stream.t_s, stream.length, note.t, tolerance, accept);
    if (i < 0 && note.tEnd !== undefined) i = firstInside(stream.t_s, stream.length, note.t, note.tEnd, accept);
    if (i < 0) return { ...note, detached: true, reason: `no record at t = ${note.t} s in this log` };
    return { ...note, line: stream.line[i], file: fileOf(log, stream, i), t_anchor: stream.t_s[i], detached: false };
  });
}

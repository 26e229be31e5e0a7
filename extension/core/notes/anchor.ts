/**
 * Re-anchoring notes to a log: a note is attached to the record nearest its time (in the note's channel and with its
 * update id where given; else the state epochs), within half a median step. Notes whose epoch no longer exists are
 * kept and marked detached, never dropped.
 */
import type { NavLog, Stream } from '../model';
import type { Note } from './sidecar';

/** A note placed on a log: the line it attaches to, or detached. */
export interface AnchoredNote extends Note {
  /** 1-based line of the record it attaches to, when attached. */
  line?: number;
  /** File of that record. */
  file?: string;
  detached: boolean;
}

function nearestIndex(t: Float64Array, n: number, target: number, accept?: (i: number) => boolean): number {
  // Binary search assumes ascending time; logs that go backwards are rare and flagged by the reader.
  let lo = 0;
  let hi = n - 1;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (t[mid] < target) lo = mid + 1;
    else hi = mid;
  }
  let best = -1;
  let bestD = Infinity;
  for (let k = Math.max(0, lo - 64); k < Math.min(n, lo + 64); k++) {
    if (accept && !accept(k)) continue;
    const d = Math.abs(t[k] - target);
    if (d < bestD) {
      bestD = d;
      best = k;
    }
  }
  return best;
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

/** Attach every note to the log (see the file comment for the rule). */
export function anchorNotes(notes: readonly Note[], log: NavLog): AnchoredNote[] {
  return notes.map((note) => {
    let stream: Stream = log.state;
    let accept: ((i: number) => boolean) | undefined;
    const ch = note.channel ? log.channels.find((c) => c.name === note.channel) : undefined;
    if (ch) {
      stream = ch;
      if (note.updateId !== undefined) {
        const idIndex = ch.ids.indexOf(note.updateId);
        if (idIndex < 0) return { ...note, detached: true };
        accept = (i) => ch.id[i] === idIndex;
      }
    }
    if (stream.length === 0) return { ...note, detached: true };
    const tolerance = Math.max(1e-9, 0.5 * medianDt(stream)) * (accept ? 4 : 1) + 1e-9;
    const i = nearestIndex(stream.t_s, stream.length, note.t, accept);
    if (i < 0 || Math.abs(stream.t_s[i] - note.t) > tolerance) {
      // A time-range note stays attached if any record lies inside its range.
      if (note.tEnd !== undefined) {
        const j = nearestIndex(stream.t_s, stream.length, note.t, accept);
        if (j >= 0 && stream.t_s[j] >= note.t && stream.t_s[j] <= note.tEnd) return { ...note, line: stream.line[j], file: stream.file, detached: false };
      }
      return { ...note, detached: true };
    }
    return { ...note, line: stream.line[i], file: stream.file, detached: false };
  });
}

/**
 * Confirmed filter restarts, stored with the log in its notes sidecar (`<log>.notes.json`, sidecar.ts) so the
 * command-line tool, the panel and CI all split the run at the same places.
 *
 * A confirmed reset is a note with `"reset": true` at the reset's time `t` (the first epoch of the new segment),
 * usually made on a `covariance-jump` finding and tagged `reset`. Being a note, it merges, survives races and git
 * like every other note, an older version keeps it as an unknown field, and un-confirming is deleting the note.
 */
import { newNoteId, type Note, type NoteOp } from './sidecar';
import { mergeResetTimes } from '../resets/segments';

/** Tag of a reset note (shown in the notes list). */
export const RESET_TAG = 'reset';

/** Times of the confirmed resets among the notes (sorted, unique). */
export function confirmedResetTimes(notes: readonly Note[]): number[] {
  return mergeResetTimes(notes.filter((n) => n.reset === true).map((n) => n.t));
}

/** What is known about the restart being confirmed (from the candidate), for the note's text. */
export interface ResetEvidence {
  /** One-epoch variance ratio of the block that jumped. */
  factor?: number;
  /** That block (`p`, `v`, `att` ...). */
  block?: string;
}

function shortNumber(x: number): string {
  return Math.abs(x) >= 1e4 || (x !== 0 && Math.abs(x) < 1e-2) ? x.toExponential(1) : String(Math.round(x * 10) / 10);
}

/** A new reset note at `t` (a fresh id; `created` is an ISO date when given). */
export function resetNote(t: number, evidence: ResetEvidence = {}, created?: string, random: () => number = Math.random): Note {
  const why = evidence.factor !== undefined
    ? ` (the covariance${evidence.block ? ` of ${evidence.block}` : ''} grew ${shortNumber(evidence.factor)}-fold in one epoch)`
    : '';
  const note: Note = {
    id: newNoteId(random), t, finding: 'covariance-jump', reset: true,
    text: `Filter restart confirmed: a new segment starts here${why}.`, tags: [RESET_TAG], status: 'open',
  };
  if (evidence.block) note.channel = evidence.block;
  if (created) note.created = created;
  return note;
}

/** The reset notes within `tol_s` of `t`. */
export function resetNotesAt(notes: readonly Note[], t: number, tol_s: number): Note[] {
  return notes.filter((n) => n.reset === true && Math.abs(n.t - t) <= tol_s);
}

/** Operations that confirm a reset at `t`: none when one is already confirmed within `tol_s`, else one `put`. */
export function confirmResetOps(notes: readonly Note[], t: number, tol_s: number, evidence: ResetEvidence = {}, created?: string): NoteOp[] {
  if (!Number.isFinite(t) || resetNotesAt(notes, t, tol_s).length > 0) return [];
  return [{ op: 'put', note: resetNote(t, evidence, created) }];
}

/** Operations that un-confirm the reset at `t`: delete every reset note within `tol_s` of it. */
export function unconfirmResetOps(notes: readonly Note[], t: number, tol_s: number): NoteOp[] {
  return resetNotesAt(notes, t, tol_s).map((n) => ({ op: 'delete', id: n.id }));
}

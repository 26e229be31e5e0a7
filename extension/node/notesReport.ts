/**
 * The notes of a log in report form (`report.notes`), for the command-line report and the panel: the sidecar
 * `<log>.notes.json` is read, each note anchored to the log just read (line, or detached with the reason). A
 * malformed or unreadable sidecar becomes one finding of kind `note` naming the file, line and column; it never
 * stops the analysis and the file is not touched.
 */
import type { NavLog } from '../core/model';
import type { Finding } from '../core/report';
import { anchorNotes, type AnchoredNote } from '../core/notes/anchor';
import { confirmedResetTimes } from '../core/notes/resets';
import { notesPathFor, readNotes, type NotesFs, nodeNotesFs } from './notesStore';

/** A note as the report carries it (schema: report.schema.json `notes` items of type object). */
export type ReportNote = AnchoredNote;

/**
 * Anchored notes of `logPath`'s sidecar, or a finding saying why they could not be read; `resets` are the times of
 * the filter restarts confirmed in it (notes with `"reset": true`, core/notes/resets.ts), empty when unreadable.
 */
export function notesForReport(logPath: string, log: NavLog, io: NotesFs = nodeNotesFs): { notes: ReportNote[]; finding?: Finding; resets: number[] } {
  const file = notesPathFor(logPath);
  let read;
  try {
    read = readNotes(file, io);
  } catch (e) {
    return { notes: [], resets: [], finding: { kind: 'note', severity: 'warning', file, message: `the notes file cannot be read (${(e as NodeJS.ErrnoException).code ?? (e as Error).message}); the report carries no notes` } };
  }
  if (read.problems.length) {
    const p = read.problems[0];
    const finding: Finding = { kind: 'note', severity: 'warning', file, message: `notes not included: ${p.message} (nor the filter resets confirmed in it)` };
    if (p.line >= 1) finding.line = p.line;
    if (p.column !== undefined && p.column >= 1) finding.column = p.column;
    return { notes: [], finding, resets: [] };
  }
  return { notes: anchorNotes(read.notes, log).map(toReportNote), resets: confirmedResetTimes(read.notes) };
}

function toReportNote(n: AnchoredNote): ReportNote {
  // `extra` (fields of a newer notes version) is not part of the report.
  const { extra: _extra, ...rest } = n;
  const out = { ...rest } as ReportNote;
  if (out.t_anchor !== undefined && !Number.isFinite(out.t_anchor)) delete out.t_anchor;
  if (out.line !== undefined && !Number.isFinite(out.line)) delete out.line;
  return out;
}

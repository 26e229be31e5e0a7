/**
 * Saving notes next to a log, safely: every write goes to a temporary file that is then renamed over the sidecar
 * (a crash between the two leaves the old file whole), and every save is compare-and-retry: read the current file,
 * apply this writer's pending operations, write the temporary file, and rename only if the sidecar still has the
 * content that was read; if it changed in between, read and merge again. A malformed sidecar is never written over:
 * the save reports the problem and the operations stay pending in memory, as they do when the folder is read-only.
 */
import * as fs from 'node:fs';
import { applyNoteOps, parseNotes, serializeNotes, type Note, type NoteOp, type NotesProblem } from '../core/notes/sidecar';

/** The file operations the store needs; injectable so tests can simulate crashes and races. */
export interface NotesFs {
  readFile(path: string): string | undefined;
  writeFile(path: string, text: string): void;
  rename(from: string, to: string): void;
  unlink(path: string): void;
}

/** The real file system. */
export const nodeNotesFs: NotesFs = {
  readFile(p) {
    try {
      return fs.readFileSync(p, 'utf8');
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code === 'ENOENT') return undefined;
      throw e;
    }
  },
  writeFile(p, text) {
    const fd = fs.openSync(p, 'w');
    try {
      fs.writeSync(fd, text);
      fs.fsyncSync(fd);
    } finally {
      fs.closeSync(fd);
    }
  },
  rename: (a, b) => fs.renameSync(a, b),
  unlink: (p) => fs.rmSync(p, { force: true }),
};

/** The sidecar path of a log. */
export function notesPathFor(logPath: string): string {
  return `${logPath}.notes.json`;
}

/** Result of reading a sidecar. */
export interface NotesRead {
  notes: Note[];
  problems: NotesProblem[];
  /** The exact text read (undefined when there is no file). */
  text: string | undefined;
}

/** Read and parse a sidecar (no file: no notes, no problem). */
export function readNotes(path: string, io: NotesFs = nodeNotesFs): NotesRead {
  const text = io.readFile(path);
  if (text === undefined) return { notes: [], problems: [], text };
  return { ...parseNotes(text, path), text };
}

/** Outcome of a save. */
export interface SaveResult {
  saved: boolean;
  notes: Note[];
  /** Why nothing was written (malformed sidecar, read-only folder ...), one plain sentence with the file. */
  message?: string;
  attempts: number;
}

/** Notes of one log with the edits not yet on disk. */
export class NotesStore {
  private pending: NoteOp[] = [];
  private current: Note[] = [];

  constructor(
    readonly path: string,
    private readonly io: NotesFs = nodeNotesFs,
    private readonly maxAttempts = 8,
  ) {}

  /** Notes as the user sees them: the file's plus the pending edits. */
  notes(): Note[] {
    return applyNoteOps(this.current, this.pending);
  }

  /** Edits not yet saved. */
  pendingCount(): number {
    return this.pending.length;
  }

  /** Re-read the file (e.g. after a change on disk); pending edits stay pending. */
  reload(): NotesProblem[] {
    const r = readNotes(this.path, this.io);
    if (r.problems.length === 0) this.current = r.notes;
    return r.problems;
  }

  /** Queue an edit (it shows at once in `notes()`); call `save()` to write it. */
  edit(op: NoteOp): void {
    this.pending.push(op);
  }

  /** Write the pending edits with compare-and-retry (see the file comment). Never throws for I/O problems. */
  save(): SaveResult {
    for (let attempt = 1; attempt <= this.maxAttempts; attempt++) {
      let read: NotesRead;
      try {
        read = readNotes(this.path, this.io);
      } catch (e) {
        return { saved: false, notes: this.notes(), attempts: attempt, message: `cannot read ${this.path}: ${(e as Error).message}; the notes are kept in memory` };
      }
      if (read.problems.length > 0) {
        const p = read.problems[0];
        return { saved: false, notes: this.notes(), attempts: attempt, message: `${p.file}:${p.line}${p.column ? ':' + p.column : ''}: ${p.message}; your notes are kept in memory` };
      }
      const merged = applyNoteOps(read.notes, this.pending);
      const text = serializeNotes(merged);
      const tmp = `${this.path}.tmp-${process.pid}-${attempt}`;
      try {
        this.io.writeFile(tmp, text);
        // Compare: rename only if nobody changed the sidecar since we read it.
        const now = this.io.readFile(this.path);
        if (now !== read.text) {
          this.io.unlink(tmp);
          continue;
        }
        this.io.rename(tmp, this.path);
      } catch (e) {
        try {
          this.io.unlink(tmp);
        } catch {
          /* the temporary file may not exist */
        }
        return { saved: false, notes: this.notes(), attempts: attempt, message: `cannot write ${this.path} (${(e as NodeJS.ErrnoException).code ?? (e as Error).message}); the notes are kept in memory and will be saved when possible` };
      }
      this.current = merged;
      this.pending = [];
      return { saved: true, notes: merged, attempts: attempt };
    }
    return { saved: false, notes: this.notes(), attempts: this.maxAttempts, message: `${this.path} kept changing while saving; the notes are kept in memory` };
  }
}

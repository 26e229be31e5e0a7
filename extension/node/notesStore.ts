/**
 * Saving notes next to a log, safely: every write goes to a temporary file that is then renamed over the sidecar
 * (a crash between the two leaves the old file whole), and every save is compare-and-retry: read the current file,
 * apply this writer's pending operations, write the temporary file, and rename only if the sidecar still has the
 * content that was read; if it changed in between, read and merge again. A malformed sidecar is never written over:
 * the save reports the problem and the operations stay pending in memory, as they do when the folder is read-only.
 *
 * The compare step cannot close the window between the last read and the rename (no portable compare-and-swap on a
 * file name), so after the rename the store reads the file back: if another writer renamed over it in that window
 * and a note this writer added is missing (or one it deleted is back), the store merges and writes again.
 */
import * as fs from 'node:fs';
import { applyNoteOps, noteProblem, parseNotes, serializeNotes, type Note, type NoteOp, type NotesProblem } from '../core/notes/sidecar';

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
  private known: string | undefined;

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
    let r: NotesRead;
    try {
      r = readNotes(this.path, this.io);
    } catch (e) {
      return [{ file: this.path, line: 0, message: `cannot read the notes file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})` }];
    }
    if (r.problems.length === 0) {
      this.current = r.notes;
      this.known = r.text;
    }
    return r.problems;
  }

  /**
   * Queue an edit (it shows at once in `notes()`); call `save()` to write it. Returns why a `put` was refused
   * (a note the file could not hold), else undefined.
   */
  edit(op: NoteOp): string | undefined {
    if (op.op === 'put') {
      const problem = noteProblem(op.note);
      if (problem) return problem;
    }
    this.pending.push(op);
    return undefined;
  }

  /** The exact text of the sidecar as last read or written by this store (to tell its own writes from others'). */
  lastText(): string | undefined {
    return this.known;
  }

  /** Write the pending edits with compare-and-retry (see the file comment). Never throws for I/O problems. */
  save(): SaveResult {
    if (this.pending.length === 0) return { saved: true, notes: this.notes(), attempts: 0 };
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
      // What is on disk now is what the user should see under the pending edits, whatever happens next.
      this.current = read.notes;
      this.known = read.text;
      const merged = applyNoteOps(read.notes, this.pending);
      const text = serializeNotes(merged);
      const tmp = `${this.path}.tmp-${process.pid}-${Math.random().toString(36).slice(2, 10)}`;
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
      // Read back: a writer that renamed over ours in the window above must not have lost our notes.
      let after: NotesRead | undefined;
      try {
        after = readNotes(this.path, this.io);
      } catch {
        after = undefined;
      }
      if (after && after.text !== text && after.problems.length === 0 && !this.reflected(after.notes)) continue;
      this.current = after && after.problems.length === 0 ? after.notes : merged;
      this.known = after && after.problems.length === 0 ? after.text : text;
      this.pending = [];
      return { saved: true, notes: this.current, attempts: attempt };
    }
    return { saved: false, notes: this.notes(), attempts: this.maxAttempts, message: `${this.path} kept changing while saving; the notes are kept in memory` };
  }

  /** Whether the pending adds and deletes show in `notes` (edits of existing notes may have been superseded). */
  private reflected(notes: readonly Note[]): boolean {
    const ids = new Set(notes.map((n) => n.id));
    const deleted = new Set<string>();
    const put = new Set<string>();
    for (const o of this.pending) {
      if (o.op === 'put') {
        put.add(o.note.id);
        deleted.delete(o.note.id);
      } else if (o.op === 'delete') {
        deleted.add(o.id);
        put.delete(o.id);
      }
    }
    for (const id of put) if (!ids.has(id)) return false;
    for (const id of deleted) if (ids.has(id)) return false;
    return true;
  }
}

/**
 * Notes on anomalies, kept next to the log in `<log>.notes.json` (format `residuum.notes/1`).
 *
 * The file is for people and for git: canonical key order, one note per line, sorted by time then id, no fields that
 * change on every save (no "saved at"), so two people's notes merge line by line. Notes are anchored by time (and
 * channel and update id where given), never by line number, so they re-attach when the log is regenerated or
 * appended; a note whose epoch no longer exists is kept and shown as detached, never dropped.
 *
 *   {
 *     "format": "residuum.notes/1",
 *     "notes": [
 *       {"id":"n-1f3a9c","t":18.08,"tEnd":19.5,"channel":"tdoa","updateId":"4-5","finding":"outlier","text":"anchor 5 blocked by a rack","tags":["nlos"],"status":"open"}
 *     ]
 *   }
 *
 * Changes are operations (add, update, delete) applied to whatever is on disk at write time, so a writer that lost a
 * race re-reads, re-applies its own operations and writes again: two windows or a git pull never lose a note.
 */

import { parse as parseJsonc, printParseErrorCode, type ParseError } from 'jsonc-parser';

/** The format identifier written into every sidecar. */
export const NOTES_FORMAT = 'residuum.notes/1';

/** One note. `t` is seconds in the log's time base; `tEnd` makes it a time range. */
export interface Note {
  id: string;
  t: number;
  tEnd?: number;
  /** Channel name, or `position` / `velocity` / `orientation` for error blocks. */
  channel?: string;
  /** Update id within the channel (an anchor pair, a satellite). */
  updateId?: string;
  /** Finding kind the note was made on, if any. */
  finding?: string;
  text: string;
  tags: string[];
  status: 'open' | 'resolved';
  author?: string;
  /** ISO date of creation (written once, never updated). */
  created?: string;
  /**
   * True: the user confirmed a filter restart at `t` (core/notes/resets.ts); the analysis starts a new segment there.
   * Added within `residuum.notes/1`: older versions keep it as an unknown field and write it back unchanged.
   */
  reset?: boolean;
  /**
   * Fields this version does not know (written by a newer version): kept as read and written back after the known
   * fields, so an older editor never drops them.
   */
  extra?: Record<string, unknown>;
}

/** The fields of a note an edit may change (applied to whatever the note is on disk at write time). */
export type NotePatch = Partial<Pick<Note, 'text' | 'tags' | 'status' | 'tEnd'>>;

/** A problem in a sidecar file: where and a plain sentence. */
export interface NotesProblem {
  file: string;
  line: number;
  column?: number;
  message: string;
}

/**
 * An edit of the notes, applied to the file's current content at write time: `put` adds or replaces a whole note,
 * `patch` changes some fields of the note as it is then (so a resolve in one window keeps a text edit made in
 * another), `delete` removes it.
 */
export type NoteOp = { op: 'put'; note: Note } | { op: 'patch'; id: string; set: NotePatch } | { op: 'delete'; id: string };

const KEY_ORDER = ['id', 't', 'tEnd', 'channel', 'updateId', 'finding', 'reset', 'text', 'tags', 'status', 'author', 'created'] as const;
const KNOWN_KEYS = new Set<string>([...KEY_ORDER, 'extra']);

/** Tags as stored: trimmed, without a leading `#`, no empty ones, no repeats, in the user's order. */
export function normalizeTags(tags: readonly string[]): string[] {
  const out: string[] = [];
  for (const raw of tags) {
    const t = raw.trim().replace(/^#+/, '').trim();
    if (t && !out.includes(t)) out.push(t);
  }
  return out;
}

/** Tags typed in a field of their own (`nlos, rack #aisle-3`): split at spaces, commas and semicolons; at most 32. */
export function tagsFromField(value: string): string[] {
  return normalizeTags(value.split(/[\s,;]+/)).filter((t) => t.length <= 64).slice(0, 32);
}

/** Split a typed line into text and `#tags` (a tag is `#` followed by letters, digits, `-`, `_`, `.` or `/`). */
export function splitTags(input: string): { text: string; tags: string[] } {
  const tags: string[] = [];
  const text = input
    .replace(/(^|\s)#([\p{L}\p{N}_./-]+)/gu, (_m, lead: string, tag: string) => {
      tags.push(tag);
      return lead;
    })
    .replace(/\s+/g, ' ')
    .trim();
  return { text, tags: normalizeTags(tags) };
}

/** Why a note cannot be stored (undefined when it can): the same rules the parser applies to the file. */
export function noteProblem(note: Note): string | undefined {
  return validNote(note);
}

/** Order notes by time, then id (the file's order). */
export function compareNotes(a: Note, b: Note): number {
  if (a.t !== b.t) return a.t < b.t ? -1 : 1;
  return a.id < b.id ? -1 : a.id > b.id ? 1 : 0;
}

/** Canonical text of a sidecar: one note per line, sorted, fixed key order, trailing newline. */
export function serializeNotes(notes: readonly Note[]): string {
  const sorted = [...notes].sort(compareNotes);
  const lines = sorted.map((n) => {
    const o: Record<string, unknown> = {};
    for (const k of KEY_ORDER) {
      const v = n[k];
      if (v === undefined) continue;
      if (k === 'tags' && Array.isArray(v) && v.length === 0) continue;
      o[k] = v;
    }
    if (n.extra) for (const k of Object.keys(n.extra).sort()) if (!KNOWN_KEYS.has(k) && n.extra[k] !== undefined) o[k] = n.extra[k];
    return '    ' + JSON.stringify(o);
  });
  return `{\n  "format": "${NOTES_FORMAT}",\n  "notes": [\n${lines.join(',\n')}${lines.length ? '\n' : ''}  ]\n}\n`;
}

function lineColumnOf(text: string, offset: number): { line: number; column: number } {
  let line = 1;
  let last = -1;
  for (let i = 0; i < offset && i < text.length; i++) {
    if (text.charCodeAt(i) === 10) {
      line++;
      last = i;
    }
  }
  return { line, column: offset - last };
}

/** Line of the n-th note entry's opening brace inside the `notes` array (best effort, for messages). */
function noteLines(text: string): number[] {
  const out: number[] = [];
  const start = text.indexOf('"notes"');
  if (start < 0) return out;
  let depth = 0;
  let inString = false;
  let line = lineColumnOf(text, start).line;
  for (let i = text.indexOf('[', start) + 1; i > 0 && i < text.length; i++) {
    const c = text[i];
    if (c === '\n') line++;
    if (inString) {
      if (c === '\\') i++;
      else if (c === '"') inString = false;
      continue;
    }
    if (c === '"') inString = true;
    else if (c === '{') {
      if (depth === 0) out.push(line);
      depth++;
    } else if (c === '}') depth--;
    else if (c === ']' && depth === 0) break;
  }
  return out;
}

function validNote(v: unknown): string | undefined {
  if (v === null || typeof v !== 'object' || Array.isArray(v)) return 'a note must be an object';
  const n = v as Record<string, unknown>;
  if (typeof n.id !== 'string' || n.id.length === 0) return 'a note needs a non-empty string "id"';
  if (typeof n.t !== 'number' || !Number.isFinite(n.t)) return `note ${n.id}: "t" must be a finite number of seconds`;
  if (n.tEnd !== undefined && (typeof n.tEnd !== 'number' || !Number.isFinite(n.tEnd) || n.tEnd < n.t)) return `note ${n.id}: "tEnd" must be a number not before "t"`;
  if (typeof n.text !== 'string') return `note ${n.id}: "text" must be a string`;
  if (n.tags !== undefined && !(Array.isArray(n.tags) && n.tags.every((x) => typeof x === 'string'))) return `note ${n.id}: "tags" must be a list of strings`;
  if (n.status !== undefined && n.status !== 'open' && n.status !== 'resolved') return `note ${n.id}: "status" must be "open" or "resolved"`;
  for (const k of ['channel', 'updateId', 'finding', 'author', 'created'] as const) {
    if (n[k] !== undefined && typeof n[k] !== 'string') return `note ${n.id}: "${k}" must be a string`;
  }
  if (n.reset !== undefined && typeof n.reset !== 'boolean') return `note ${n.id}: "reset" must be true or false`;
  return undefined;
}

/**
 * Parse a sidecar. Whitespace and key order do not matter (stable under reformatting). A malformed file yields
 * problems with line and column and no notes: the caller must then leave the file untouched and write nothing.
 */
export function parseNotes(text: string, file: string): { notes: Note[]; problems: NotesProblem[] } {
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  if (body.trim() === '') return { notes: [], problems: [] };
  const conflict = /^(<{7}|={7}|>{7})( |$)/m.exec(body);
  if (conflict) {
    const where = lineColumnOf(body, conflict.index + 1);
    return { notes: [], problems: [{ file, line: where.line, column: 1, message: 'the notes file has unresolved git conflict markers; resolve them (keep the note lines of both sides) and save; it was left untouched' }] };
  }
  let data: unknown;
  try {
    data = JSON.parse(body);
  } catch (e) {
    // V8 does not always say where; the strict scan of jsonc-parser does (offset of the first error).
    const errors: ParseError[] = [];
    parseJsonc(body, errors, { disallowComments: true, allowTrailingComma: false, allowEmptyContent: false });
    const first = errors[0];
    const why = first ? printParseErrorCode(first.error) : (e as Error).message.split('\n')[0];
    const where = first ? lineColumnOf(body, first.offset) : { line: 1, column: undefined };
    return { notes: [], problems: [{ file, line: where.line, ...(where.column ? { column: where.column } : {}), message: `the notes file is not valid JSON (${why}); it was left untouched` }] };
  }
  if (data === null || typeof data !== 'object' || Array.isArray(data)) {
    return { notes: [], problems: [{ file, line: 1, message: 'the notes file must be an object with "format" and "notes"; it was left untouched' }] };
  }
  const obj = data as Record<string, unknown>;
  if (obj.format !== NOTES_FORMAT) {
    const found = typeof obj.format === 'string' ? `unknown notes format "${obj.format}"` : 'the notes file has no "format" field';
    return { notes: [], problems: [{ file, line: 1, message: `${found} (expected "${NOTES_FORMAT}"); the file was left untouched` }] };
  }
  if (!Array.isArray(obj.notes)) return { notes: [], problems: [{ file, line: 1, message: '"notes" must be a list; the file was left untouched' }] };
  const lines = noteLines(body);
  const problems: NotesProblem[] = [];
  const notes: Note[] = [];
  const seen = new Set<string>();
  obj.notes.forEach((v, i) => {
    const err = validNote(v);
    const line = lines[i] ?? 1;
    if (err) {
      problems.push({ file, line, message: `${err}; the file was left untouched` });
      return;
    }
    const n = v as Note;
    if (seen.has(n.id)) {
      problems.push({ file, line, message: `note id ${n.id} appears twice; the file was left untouched` });
      return;
    }
    seen.add(n.id);
    const note: Note = { id: n.id, t: n.t, text: n.text, tags: n.tags ?? [], status: n.status ?? 'open' };
    for (const k of ['tEnd', 'channel', 'updateId', 'finding', 'reset', 'author', 'created'] as const) if (n[k] !== undefined) (note as unknown as Record<string, unknown>)[k] = n[k];
    const extra: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(v as Record<string, unknown>)) if (!KNOWN_KEYS.has(k)) extra[k] = x;
    if (Object.keys(extra).length) note.extra = extra;
    notes.push(note);
  });
  return problems.length ? { notes: [], problems } : { notes: notes.sort(compareNotes), problems };
}

/**
 * Apply edit operations to a set of notes (by id; `put` adds or replaces, `patch` changes fields of a note that
 * still exists and is dropped for one deleted meanwhile, `delete` removes). A patch that would make the note
 * invalid (`tEnd` before `t`) is ignored.
 */
export function applyNoteOps(notes: readonly Note[], ops: readonly NoteOp[]): Note[] {
  const byId = new Map(notes.map((n) => [n.id, n]));
  for (const o of ops) {
    if (o.op === 'put') byId.set(o.note.id, o.note);
    else if (o.op === 'patch') {
      const before = byId.get(o.id);
      if (!before) continue;
      const after: Note = { ...before };
      if (o.set.text !== undefined) after.text = o.set.text;
      if (o.set.tags !== undefined) after.tags = normalizeTags(o.set.tags);
      if (o.set.status !== undefined) after.status = o.set.status;
      if ('tEnd' in o.set) {
        if (o.set.tEnd === undefined) delete after.tEnd;
        else after.tEnd = o.set.tEnd;
      }
      if (validNote(after) === undefined) byId.set(o.id, after);
    } else byId.delete(o.id);
  }
  return [...byId.values()].sort(compareNotes);
}

/** A fresh note id: time-free and collision-resistant (random hex from the given source of randomness). */
export function newNoteId(random: () => number = Math.random): string {
  let s = '';
  for (let i = 0; i < 12; i++) s += Math.floor(random() * 16).toString(16);
  return `n-${s}`;
}

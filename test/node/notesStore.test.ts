import { chmodSync, existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { parseNotes, serializeNotes, type Note } from '../../extension/core/notes/sidecar';
import { NotesStore, nodeNotesFs, notesPathFor, readNotes, type NotesFs } from '../../extension/node/notesStore';

const dirs: string[] = [];
function scratch(): string {
  const d = mkdtempSync(path.join(tmpdir(), 'residuum-notes-'));
  dirs.push(d);
  return d;
}
afterEach(() => {
  for (const d of dirs.splice(0)) {
    try {
      chmodSync(d, 0o755);
    } catch {
      /* already gone */
    }
    rmSync(d, { recursive: true, force: true });
  }
});

const note = (id: string, t: number, text = id): Note => ({ id, t, text, tags: [], status: 'open' });

/** A file system that can fail or interleave another writer at chosen steps (the real one underneath). */
function scriptedFs(hooks: { beforeRename?: (from: string, to: string) => void; afterRename?: () => void }): NotesFs {
  return {
    ...nodeNotesFs,
    rename(from, to) {
      hooks.beforeRename?.(from, to);
      nodeNotesFs.rename(from, to);
      hooks.afterRename?.();
    },
  };
}

describe('notes store', () => {
  it('writes the canonical file and reads it back', () => {
    const file = notesPathFor(path.join(scratch(), 'run.csv'));
    const store = new NotesStore(file);
    store.edit({ op: 'put', note: note('n-2', 2) });
    store.edit({ op: 'put', note: note('n-1', 1) });
    const r = store.save();
    expect(r).toMatchObject({ saved: true, attempts: 1 });
    expect(readFileSync(file, 'utf8')).toBe(serializeNotes([note('n-1', 1), note('n-2', 2)]));
    expect(store.pendingCount()).toBe(0);
    expect(readdirSync(path.dirname(file)).filter((f) => f.includes('.tmp-'))).toEqual([]);
  });

  it('a crash between writing the temporary file and the rename leaves the old sidecar whole', () => {
    const file = notesPathFor(path.join(scratch(), 'run.csv'));
    writeFileSync(file, serializeNotes([note('n-old', 1)]));
    const before = readFileSync(file, 'utf8');
    const crashing = scriptedFs({
      beforeRename: () => {
        throw Object.assign(new Error('process killed'), { code: 'EINTR' });
      },
    });
    const store = new NotesStore(file, crashing);
    store.edit({ op: 'put', note: note('n-new', 2) });
    const r = store.save();
    expect(r.saved).toBe(false);
    expect(r.message).toMatch(/kept in memory/);
    // The sidecar is exactly the old one, parseable; the note is still pending and shown.
    expect(readFileSync(file, 'utf8')).toBe(before);
    expect(parseNotes(before, file).problems).toEqual([]);
    expect(store.notes().map((n) => n.id)).toEqual(['n-old', 'n-new']);
    // The next save (the process restarted, the file system works) writes both.
    const again = new NotesStore(file);
    again.edit({ op: 'put', note: note('n-new', 2) });
    expect(again.save().saved).toBe(true);
    expect(readNotes(file).notes.map((n) => n.id)).toEqual(['n-old', 'n-new']);
  });

  it('a writer that changed the file between our read and our rename is merged, not overwritten', () => {
    const file = notesPathFor(path.join(scratch(), 'run.csv'));
    writeFileSync(file, serializeNotes([note('n-base', 0)]));
    let raced = false;
    const other = new NotesStore(file);
    // Interleave: the other window saves after our first read (inside our writeFile of the temporary file).
    const io: NotesFs = {
      ...nodeNotesFs,
      writeFile(p, text) {
        nodeNotesFs.writeFile(p, text);
        if (!raced && p.includes('.tmp-')) {
          raced = true;
          other.edit({ op: 'put', note: note('n-other', 5) });
          other.edit({ op: 'delete', id: 'n-base' });
          expect(other.save().saved).toBe(true);
        }
      },
    };
    const racing = new NotesStore(file, io);
    racing.edit({ op: 'put', note: note('n-mine', 3) });
    const r = racing.save();
    expect(r).toMatchObject({ saved: true, attempts: 2 });
    expect(readNotes(file).notes.map((n) => n.id)).toEqual(['n-mine', 'n-other']);
    expect(racing.pendingCount()).toBe(0);
  });

  it('a writer that renamed over ours right after our check is caught by the read-back and merged again', () => {
    const file = notesPathFor(path.join(scratch(), 'run.csv'));
    writeFileSync(file, serializeNotes([note('n-base', 0)]));
    const stale = serializeNotes([note('n-base', 0), note('n-theirs', 9)]);
    let once = false;
    const io = scriptedFs({
      afterRename: () => {
        // The other writer read the file before our rename and renames its own version over ours now.
        if (once) return;
        once = true;
        writeFileSync(file, stale);
      },
    });
    const store = new NotesStore(file, io);
    store.edit({ op: 'put', note: note('n-mine', 3) });
    const r = store.save();
    expect(r.saved).toBe(true);
    expect(r.attempts).toBe(2);
    expect(readNotes(file).notes.map((n) => n.id)).toEqual(['n-base', 'n-mine', 'n-theirs']);
  });

  it('two stores on one file, many interleaved saves: no note is lost', () => {
    const file = notesPathFor(path.join(scratch(), 'run.csv'));
    const a = new NotesStore(file);
    const b = new NotesStore(file);
    for (let k = 0; k < 20; k++) {
      a.edit({ op: 'put', note: note(`a-${k}`, k) });
      b.edit({ op: 'put', note: note(`b-${k}`, k + 0.5) });
      if (k % 3 === 0) expect(a.save().saved).toBe(true);
      if (k % 2 === 0) expect(b.save().saved).toBe(true);
    }
    expect(a.save().saved).toBe(true);
    expect(b.save().saved).toBe(true);
    b.edit({ op: 'patch', id: 'a-4', set: { status: 'resolved' } });
    a.edit({ op: 'patch', id: 'a-4', set: { text: 'edited in window a' } });
    expect(b.save().saved).toBe(true);
    expect(a.save().saved).toBe(true);
    const all = readNotes(file).notes;
    expect(all).toHaveLength(40);
    expect(all.find((n) => n.id === 'a-4')).toMatchObject({ status: 'resolved', text: 'edited in window a' });
  });

  it('a malformed sidecar is reported with file and line and never written over', () => {
    const file = notesPathFor(path.join(scratch(), 'run.csv'));
    const broken = '{\n  "format": "residuum.notes/1",\n  "notes": [\n    {"id":"n-1","t":1,"text":"x"}\n    {"id":"n-2","t":2,"text":"y"}\n  ]\n}\n';
    writeFileSync(file, broken);
    const store = new NotesStore(file);
    expect(store.reload()[0]).toMatchObject({ file, line: 5 });
    store.edit({ op: 'put', note: note('n-3', 3) });
    const r = store.save();
    expect(r.saved).toBe(false);
    expect(r.message).toContain(`${file}:5`);
    expect(r.message).toMatch(/left untouched.*kept in memory/);
    expect(readFileSync(file, 'utf8')).toBe(broken);
    expect(store.notes().map((n) => n.id)).toEqual(['n-3']);
  });

  it.skipIf(process.getuid?.() === 0)('a read-only folder gets a message and the note stays in memory until it can be saved', () => {
    const dir = scratch();
    const file = notesPathFor(path.join(dir, 'run.csv'));
    chmodSync(dir, 0o555);
    const store = new NotesStore(file);
    store.edit({ op: 'put', note: note('n-1', 1) });
    const r = store.save();
    expect(r.saved).toBe(false);
    expect(r.message).toMatch(/cannot write .*EACCES.*kept in memory/);
    expect(existsSync(file)).toBe(false);
    expect(store.notes().map((n) => n.id)).toEqual(['n-1']);
    chmodSync(dir, 0o755);
    expect(store.save().saved).toBe(true);
    expect(readNotes(file).notes.map((n) => n.id)).toEqual(['n-1']);
  });

  it('a folder that refuses writes (EACCES, simulated for any user) keeps the note pending, with a message', () => {
    const file = notesPathFor(path.join(scratch(), 'run.csv'));
    const readOnly: NotesFs = {
      ...nodeNotesFs,
      writeFile: () => {
        throw Object.assign(new Error('permission denied'), { code: 'EACCES' });
      },
    };
    const store = new NotesStore(file, readOnly);
    store.edit({ op: 'put', note: note('n-1', 1) });
    const r = store.save();
    expect(r.saved).toBe(false);
    expect(r.message).toBe(`cannot write ${file} (EACCES); the notes are kept in memory and will be saved when possible`);
    expect(existsSync(file)).toBe(false);
    expect(store.pendingCount()).toBe(1);
  });

  it('refuses a note the file could not hold', () => {
    const store = new NotesStore(notesPathFor(path.join(scratch(), 'run.csv')));
    expect(store.edit({ op: 'put', note: { ...note('n', 1), t: Number.POSITIVE_INFINITY } })).toMatch(/finite/);
    expect(store.pendingCount()).toBe(0);
  });
});

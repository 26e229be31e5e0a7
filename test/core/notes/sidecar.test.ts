import { describe, expect, it } from 'vitest';
import {
  NOTES_FORMAT,
  applyNoteOps,
  newNoteId,
  noteProblem,
  normalizeTags,
  parseNotes,
  serializeNotes,
  splitTags,
  type Note,
} from '../../../extension/core/notes/sidecar';

const a: Note = { id: 'n-b', t: 18.08, tEnd: 19.5, channel: 'tdoa', updateId: '4-5', finding: 'outlier', text: 'anchor 5 blocked by a rack', tags: ['nlos'], status: 'open' };
const b: Note = { id: 'n-a', t: 3.5, text: 'gate too tight after the tuning change', tags: [], status: 'resolved', created: '2026-11-30' };

describe('sidecar format', () => {
  it('writes one note per line, sorted by time then id, fixed key order, versioned, newline at the end', () => {
    const text = serializeNotes([a, b]);
    const lines = text.split('\n');
    expect(lines[0]).toBe('{');
    expect(lines[1]).toBe(`  "format": "${NOTES_FORMAT}",`);
    expect(lines[3]).toBe('    {"id":"n-a","t":3.5,"text":"gate too tight after the tuning change","status":"resolved","created":"2026-11-30"},');
    expect(lines[4]).toBe('    {"id":"n-b","t":18.08,"tEnd":19.5,"channel":"tdoa","updateId":"4-5","finding":"outlier","text":"anchor 5 blocked by a rack","tags":["nlos"],"status":"open"}');
    expect(text.endsWith(']\n}\n')).toBe(true);
    // No volatile field: the same notes give the same bytes, whatever their order.
    expect(serializeNotes([b, a])).toBe(text);
  });

  it('reads back what it writes, and is stable under reformatting and key reordering', () => {
    const text = serializeNotes([a, b]);
    expect(parseNotes(text, 'x').notes).toEqual([b, a]);
    const reformatted = JSON.stringify({ notes: [{ ...a, text: a.text }, b].reverse().map((n) => Object.fromEntries(Object.entries(n).reverse())), format: NOTES_FORMAT }, null, 4);
    const back = parseNotes(reformatted, 'x');
    expect(back.problems).toEqual([]);
    expect(serializeNotes(back.notes)).toBe(text);
  });

  it('keeps fields of a newer version when it writes the file again', () => {
    const text = `{"format":"${NOTES_FORMAT}","notes":[{"id":"n-1","t":1,"text":"x","colour":"amber","links":[1,2]}]}`;
    const { notes, problems } = parseNotes(text, 'x');
    expect(problems).toEqual([]);
    expect(notes[0].extra).toEqual({ colour: 'amber', links: [1, 2] });
    expect(serializeNotes(notes)).toContain('"status":"open","colour":"amber","links":[1,2]}');
  });

  it('an empty file is no notes and no problem', () => {
    expect(parseNotes('', 'f')).toEqual({ notes: [], problems: [] });
    expect(parseNotes('\n  \n', 'f')).toEqual({ notes: [], problems: [] });
  });

  it('malformed files give a problem with file and line, and no notes', () => {
    const bad = `{\n  "format": "${NOTES_FORMAT}",\n  "notes": [\n    {"id":"n-1","t":1,"text":"x"},,\n  ]\n}\n`;
    const r = parseNotes(bad, 'run.csv.notes.json');
    expect(r.notes).toEqual([]);
    expect(r.problems[0].file).toBe('run.csv.notes.json');
    expect(r.problems[0].line).toBe(4);
    expect(r.problems[0].message).toMatch(/not valid JSON.*left untouched/);

    const badNote = `{\n  "format": "${NOTES_FORMAT}",\n  "notes": [\n    {"id":"n-1","t":1,"text":"x"},\n    {"id":"n-2","t":"soon","text":"y"}\n  ]\n}\n`;
    const r2 = parseNotes(badNote, 'f');
    expect(r2.notes).toEqual([]);
    expect(r2.problems).toHaveLength(1);
    expect(r2.problems[0].line).toBe(5);
    expect(r2.problems[0].message).toContain('n-2');

    expect(parseNotes('{"format":"residuum.notes/9","notes":[]}', 'f').problems[0].message).toMatch(/unknown notes format/);
    expect(parseNotes('[1,2]', 'f').problems[0].message).toMatch(/must be an object/);
    const dup = `{"format":"${NOTES_FORMAT}","notes":[{"id":"n","t":1,"text":""},{"id":"n","t":2,"text":""}]}`;
    expect(parseNotes(dup, 'f').problems[0].message).toMatch(/appears twice/);
    const range = `{"format":"${NOTES_FORMAT}","notes":[{"id":"n","t":2,"tEnd":1,"text":""}]}`;
    expect(parseNotes(range, 'f').problems[0].message).toMatch(/tEnd/);
  });

  it('names git conflict markers left by a merge', () => {
    const text = serializeNotes([a]).replace('  "notes": [\n', '  "notes": [\n<<<<<<< HEAD\n') + '=======\n>>>>>>> other\n';
    const r = parseNotes(text, 'f');
    expect(r.notes).toEqual([]);
    expect(r.problems[0].line).toBe(4);
    expect(r.problems[0].message).toMatch(/conflict markers/);
  });

  it('merges by note id: put, patch and delete', () => {
    const c: Note = { id: 'n-c', t: 7, text: 'c', tags: [], status: 'open' };
    const merged = applyNoteOps([a, b], [{ op: 'put', note: c }, { op: 'patch', id: 'n-b', set: { status: 'resolved', tags: ['#nlos', ' rack ', 'nlos'] } }, { op: 'delete', id: 'n-a' }]);
    expect(merged.map((n) => n.id)).toEqual(['n-c', 'n-b']);
    expect(merged[1]).toEqual({ ...a, status: 'resolved', tags: ['nlos', 'rack'] });
    // A patch of a note deleted meanwhile is dropped, and an invalid patch is ignored.
    expect(applyNoteOps([b], [{ op: 'patch', id: 'gone', set: { text: 'x' } }])).toEqual([b]);
    expect(applyNoteOps([a], [{ op: 'patch', id: 'n-b', set: { tEnd: 1 } }])).toEqual([a]);
    expect(applyNoteOps([a], [{ op: 'patch', id: 'n-b', set: { tEnd: undefined } }])[0].tEnd).toBeUndefined();
  });

  it('tags: #words out of typed text, normalised', () => {
    expect(splitTags('anchor 5 blocked #nlos by a rack #rack/aisle-3')).toEqual({ text: 'anchor 5 blocked by a rack', tags: ['nlos', 'rack/aisle-3'] });
    expect(splitTags('no tags, issue#4 stays')).toEqual({ text: 'no tags, issue#4 stays', tags: [] });
    expect(normalizeTags(['#a', 'a', '', '  b '])).toEqual(['a', 'b']);
  });

  it('ids are fresh and well formed; invalid notes are named', () => {
    let k = 0;
    const seq = (): number => ((k++ * 7) % 16) / 16;
    expect(newNoteId(seq)).toMatch(/^n-[0-9a-f]{12}$/);
    expect(newNoteId()).not.toBe(newNoteId());
    expect(noteProblem({ ...a, t: Number.NaN })).toMatch(/finite/);
    expect(noteProblem(a)).toBeUndefined();
  });
});

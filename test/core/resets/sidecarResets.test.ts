/**
 * Confirmed resets in the notes sidecar (`residuum.notes/1` with the added `reset` field): round trip, old files
 * without the field, an older reader's view (unknown field kept), confirm and un-confirm operations.
 */
import { describe, expect, it } from 'vitest';
import { applyNoteOps, parseNotes, serializeNotes, type Note } from '../../../extension/core/notes/sidecar';
import {
  confirmResetOps, confirmedResetTimes, resetNote, RESET_TAG, unconfirmResetOps,
} from '../../../extension/core/notes/resets';
import { mulberry32 } from '../../helpers/mulberry32';

const OLD_FILE = `{
  "format": "residuum.notes/1",
  "notes": [
    {"id":"n-000000000001","t":18.08,"channel":"tdoa","updateId":"4-5","finding":"outlier","text":"anchor 5 blocked by a rack","tags":["nlos"],"status":"open","created":"2026-12-01"}
  ]
}
`;

describe('reset notes in the sidecar', () => {
  it('an old file without the field reads as before and is written back byte for byte', () => {
    const { notes, problems } = parseNotes(OLD_FILE, 'run.csv.notes.json');
    expect(problems).toEqual([]);
    expect(notes[0].reset).toBeUndefined();
    expect(confirmedResetTimes(notes)).toEqual([]);
    expect(serializeNotes(notes)).toBe(OLD_FILE);
  });

  it('a reset note round-trips with the field in its canonical place', () => {
    const note = resetNote(60.1, { factor: 1234.5, block: 'v' }, '2026-12-02', mulberry32(4));
    expect(note.reset).toBe(true);
    expect(note.tags).toEqual([RESET_TAG]);
    expect(note.finding).toBe('covariance-jump');
    expect(note.text).toContain('1234.5-fold');
    const text = serializeNotes([note]);
    expect(text).toMatch(/"finding":"covariance-jump","reset":true,"text":/);
    const back = parseNotes(text, 'f');
    expect(back.problems).toEqual([]);
    expect(back.notes).toEqual([note]);
    expect(confirmedResetTimes(back.notes)).toEqual([60.1]);
  });

  it('a reset field that is not a boolean is a problem with its line, and nothing is read', () => {
    const bad = OLD_FILE.replace('"status":"open"', '"status":"open","reset":"yes"');
    const r = parseNotes(bad, 'f');
    expect(r.notes).toEqual([]);
    expect(r.problems).toEqual([{ file: 'f', line: 4, message: 'note n-000000000001: "reset" must be true or false; the file was left untouched' }]);
  });

  it('confirm adds one note (idempotent within the tolerance); un-confirm deletes it; other notes stay', () => {
    const base = parseNotes(OLD_FILE, 'f').notes;
    const ops = confirmResetOps(base, 60, 0.05, { factor: 50, block: 'p' });
    expect(ops).toHaveLength(1);
    const after = applyNoteOps(base, ops);
    expect(confirmedResetTimes(after)).toEqual([60]);
    expect(confirmResetOps(after, 60.02, 0.05)).toEqual([]);
    expect(unconfirmResetOps(after, 61, 0.05)).toEqual([]);
    const undone = applyNoteOps(after, unconfirmResetOps(after, 60.02, 0.05));
    expect(undone).toEqual(base);
    // a plain note at the same time is not a reset and is never deleted by un-confirm
    const plain: Note = { id: 'n-2', t: 60, text: 'look here', tags: [], status: 'open' };
    expect(unconfirmResetOps([...after, plain], 60, 0.05).map((o) => o.op === 'delete' && o.id)).toEqual([ops[0].op === 'put' && ops[0].note.id]);
    expect(confirmResetOps(base, NaN, 0.05)).toEqual([]);
  });
});

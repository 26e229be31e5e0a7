import { describe, expect, it } from 'vitest';
import { anchorNotes } from '../../../extension/core/notes/anchor';
import { indexLogText, targetAtLine } from '../../../extension/core/notes/lineIndex';
import type { Note } from '../../../extension/core/notes/sidecar';
import { readText, wideCsv } from './helpers';

const onEpoch: Note = { id: 'n-epoch', t: 0.5, text: 'gate too tight after the tuning change', tags: ['tuning'], status: 'open' };
const onUpdate: Note = { id: 'n-upd', t: 0.8, channel: 'tdoa', updateId: '4-5', text: 'anchor 5 blocked by a rack', tags: ['nlos'], status: 'open' };
const onRange: Note = { id: 'n-range', t: 0.33, tEnd: 0.61, text: 'slow drift here', tags: [], status: 'open' };
const gone: Note = { id: 'n-gone', t: 50, text: 'epoch beyond the end', tags: [], status: 'resolved' };
const onError: Note = { id: 'n-err', t: 0.2, channel: 'position', text: 'error block note', tags: [], status: 'open' };
const notes = [onEpoch, onUpdate, onRange, gone, onError];

// Line of t in wideCsv(0, n, preamble): header after the preamble, then one row per 0.1 s.
const lineOf = (t: number, preamble: number, t0 = 0): number => preamble + 2 + Math.round((t - t0) / 0.1);

describe.each([
  ['the reader (NavLog)', (text: string) => readText(text)],
  ['the quick text index', async (text: string) => indexLogText(text, 'run.csv')!],
])('re-anchoring with %s', (_name, load) => {
  it('places notes by time, channel and id', async () => {
    const log = await load(wideCsv(0, 20));
    const [e, u, r, g, p] = anchorNotes(notes, log);
    expect(e).toMatchObject({ detached: false, line: lineOf(0.5, 0) });
    expect(u).toMatchObject({ detached: false, line: lineOf(0.8, 0), t_anchor: 0.8 });
    // Range note: t = 0.33 is within half a step of the record at 0.3.
    expect(r).toMatchObject({ detached: false, line: lineOf(0.3, 0) });
    // A channel that is not a measurement channel (an error block) means the state epochs.
    expect(p).toMatchObject({ detached: false, line: lineOf(0.2, 0) });
    expect(g.detached).toBe(true);
    expect(g.reason).toMatch(/no record at t = 50/);
    expect(g.text).toBe(gone.text);
  });

  it('a regenerated log with rows inserted before the noted epoch moves the notes to their new lines', async () => {
    // Five earlier epochs and three metadata lines inserted before: every note moves down by 8 lines.
    const log = await load(wideCsv(-0.5, 25, ['# scene: regenerated', '# frame: ENU', '# source: src/ekf.cpp:10']));
    const [e, u, r, g] = anchorNotes(notes, log);
    expect(e.line).toBe(lineOf(0.5, 3, -0.5));
    expect(e.line).toBe(lineOf(0.5, 0) + 8);
    expect(u.line).toBe(lineOf(0.8, 0) + 8);
    expect(r.line).toBe(lineOf(0.3, 0) + 8);
    expect(g.detached).toBe(true);
  });

  it('an appended log keeps the lines and attaches a note that was detached before', async () => {
    const log = await load(wideCsv(0, 600));
    const [e, , , g] = anchorNotes(notes, log);
    expect(e.line).toBe(lineOf(0.5, 0));
    expect(g).toMatchObject({ detached: false, line: lineOf(50, 0) });
  });

  it('an update id that is gone, a time before the log, or a channel that is gone is detached, never dropped', async () => {
    const log = await load(wideCsv(0, 20));
    const missing = anchorNotes([{ ...onUpdate, updateId: '9-9' }, { ...onEpoch, t: -3 }, { ...onUpdate, channel: 'gnss' }], log);
    expect(missing.map((n) => n.detached)).toEqual([true, true, true]);
    expect(missing[0].reason).toMatch(/no update with id 9-9/);
    expect(missing[2].reason).toMatch(/no channel gnss/);
    // A range note whose start is between records still attaches to the first record inside its range.
    const [r] = anchorNotes([{ ...onRange, t: 0.55, tEnd: 0.75 }], log);
    expect(r).toMatchObject({ detached: false, line: lineOf(0.6, 0) });
  });

  it('an update id far from its neighbours is found (sparse ids)', async () => {
    // id 4-5 only every 0.4 s, among 1-2 updates and state-only rows.
    const log = await load(wideCsv(0, 400));
    const [a, b] = anchorNotes([{ ...onUpdate, t: 1.6 }, { ...onUpdate, t: 38.4 }], log);
    expect(a.line).toBe(lineOf(1.6, 0));
    expect(b.line).toBe(lineOf(38.4, 0));
  });
});

describe('quick text index', () => {
  it('gives the anchor of a log line: state epoch, or the one update on a line without state', () => {
    const text = ['# frame: ENU', 't,p_x,nu_tdoa,s_tdoa,id_tdoa', '0.0,1,,,', '0.05,,0.2,0.01,4-5', '0.1,1.1,,,'].join('\n');
    const index = indexLogText(text, 'r.csv')!;
    expect(targetAtLine(index, 3)).toEqual({ t: 0 });
    expect(targetAtLine(index, 4)).toEqual({ t: 0.05, channel: 'tdoa', updateId: '4-5' });
    expect(targetAtLine(index, 2)).toBeUndefined();
    expect(targetAtLine(index, 1)).toBeUndefined();
  });

  it('reads JSON Lines records and time units; refuses a JSON document', () => {
    const jsonl = ['{"kind":"state","t":1.5,"p":[0,0,0]}', '{"kind":"update","t":1.6,"channel":"tdoa","id":"4-5","nu":[0.1]}'].join('\n');
    const index = indexLogText(jsonl, 'r.jsonl')!;
    expect(targetAtLine(index, 1)).toEqual({ t: 1.5 });
    expect(targetAtLine(index, 2)).toEqual({ t: 1.6, channel: 'tdoa', updateId: '4-5' });
    const ms = indexLogText('t_ms,p_x\n1500,0\n', 'r.csv')!;
    expect(ms.state.t_s[0]).toBeCloseTo(1.5, 12);
    expect(indexLogText('[{"t":1}]', 'r.json')).toBeUndefined();
    expect(indexLogText('a,b\n1,2\n', 'r.csv')).toBeUndefined();
  });
});

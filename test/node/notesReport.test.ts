import { copyFileSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { serializeNotes, type Note } from '../../extension/core/notes/sidecar';
import { analyzeFile } from '../../extension/node/analyzeFile';
import { notesPathFor } from '../../extension/node/notesStore';
import { reportProblems } from '../helpers/reportSchema';

const ROOT = path.resolve(__dirname, '../..');
let dir = '';
let log = '';

beforeAll(() => {
  dir = mkdtempSync(path.join(tmpdir(), 'residuum-notes-report-'));
  log = path.join(dir, 'warehouse-flight.csv');
  copyFileSync(path.join(ROOT, 'demo', 'warehouse-flight.csv'), log);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** 1-based line of the first row whose time cell is `t` (as written). */
function lineOfTime(text: string, t: string): number {
  return text.split('\n').findIndex((l) => l.startsWith(`${t},`)) + 1;
}

describe('the report carries the notes of the sidecar', () => {
  it('anchored to the demo log, detached ones kept, schema-valid', async () => {
    const notes: Note[] = [
      { id: 'n-epoch', t: 17.85, text: '<b>gate</b> too tight after the tuning change', tags: ['tuning'], status: 'open' },
      { id: 'n-gone', t: 9999, text: 'an epoch the log does not have', tags: [], status: 'resolved' },
    ];
    writeFileSync(notesPathFor(log), serializeNotes(notes));
    const { report } = await analyzeFile(log);
    expect(reportProblems(report)).toEqual([]);
    const byId = new Map((report.notes as { id: string }[]).map((n) => [n.id, n]));
    const text = readFileSync(log, 'utf8');
    expect(byId.get('n-epoch')).toMatchObject({ detached: false, line: lineOfTime(text, '17.85'), text: notes[0].text, tags: ['tuning'] });
    expect(byId.get('n-gone')).toMatchObject({ detached: true, status: 'resolved' });
    expect(report.findings.filter((f) => f.kind === 'note')).toEqual([]);
  });

  it('a malformed sidecar becomes a finding with file and line; the analysis goes on and the file is untouched', async () => {
    const broken = '{\n  "format": "residuum.notes/1",\n  "notes": [\n    {"id":"n-1","t":1,"text":"x"},\n  ]\n}\n';
    writeFileSync(notesPathFor(log), broken);
    const { report } = await analyzeFile(log);
    expect(reportProblems(report)).toEqual([]);
    expect(report.notes).toEqual([]);
    const f = report.findings.find((x) => x.kind === 'note');
    expect(f).toMatchObject({ file: notesPathFor(log), line: 5, severity: 'warning' });
    expect(f?.message).toMatch(/notes not included: .*left untouched/);
    expect(report.channels.length).toBeGreaterThan(0);
    expect(readFileSync(notesPathFor(log), 'utf8')).toBe(broken);
  });

  it('notes given by the caller win over the sidecar', async () => {
    const { report } = await analyzeFile(log, { notes: ['from the caller'] });
    expect(report.notes).toEqual(['from the caller']);
  });
});

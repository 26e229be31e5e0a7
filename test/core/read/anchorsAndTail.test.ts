// Anchors files (log-conventions.md, "Anchors") and incremental reading of a growing log (LogReader).
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import * as path from 'node:path';
import { LogReader, parseAnchorsText, readAnchors, readRun, textSource } from '../../../extension/core/read/index';
import { encodeUtf8 } from '../../../extension/core/read/utf8';
import { arr, FIXTURES } from './helpers';

describe('anchors files', () => {
  it('CSV id,x,y,z: bad rows are reported with their line and skipped (anchors.csv)', async () => {
    const r = await readAnchors(textSource('anchors.csv', readFileSync(path.join(FIXTURES, 'anchors.csv'), 'utf8')));
    expect(r.anchors).toEqual([{ id: '0', p: [0.3, 0.3, 7.8] }, { id: '1', p: [20, 0.2, 3.1] }]);
    expect(r.diagnostics).toEqual([expect.objectContaining({ kind: 'parse-error', file: 'anchors.csv', line: 4 })]);
  });

  it('JSON [{id, p}]: numeric ids become strings; an element without 3 coordinates is reported at its brace (anchors.json)', () => {
    const r = parseAnchorsText(readFileSync(path.join(FIXTURES, 'anchors.json'), 'utf8'), 'anchors.json');
    expect(r.anchors).toEqual([{ id: '0', p: [0.3, 0.3, 7.8] }, { id: '1', p: [20, 0.2, 3.1] }]);
    expect(r.diagnostics).toEqual([expect.objectContaining({ line: 4, column: 3 })]);
  });

  it('an anchors file given to readRun joins the metadata anchors', async () => {
    const log = await readRun(textSource('a.csv', '# anchor 7: 1 2 3\nt,x\n0,1\n'), {
      anchors: textSource('anch.json', '[{"id": "8", "p": [4, 5, 6]}]'),
    });
    expect(log.anchors.map((a) => a.id)).toEqual(['7', '8']);
    expect(log.files).toContain('anch.json');
  });
});

describe('LogReader: tailing a growing file', () => {
  it('snapshots hold the complete lines so far; pushing the bytes after bytesRead continues the same log', () => {
    const whole = 't,p_x,nu_c,s_c\n0,1,0.1,1\n0.1,2,,\n0.2,3,0.2,1\n0.3,4,,\n';
    const cut = whole.indexOf('0.2,3') + 2; // in the middle of line 4
    const bytes = encodeUtf8(whole);
    const reader = new LogReader('grow.csv');
    reader.push(bytes.subarray(0, cut));
    const first = reader.snapshot();
    expect(arr(first.state.columns.get('p_x'))).toEqual([1, 2]);
    expect(reader.bytesRead).toBe(cut);
    // The host re-opens the file at reader.bytesRead and pushes what was appended since.
    reader.push(bytes.subarray(reader.bytesRead));
    const second = reader.snapshot();
    expect(arr(second.state.columns.get('p_x'))).toEqual([1, 2, 3, 4]);
    expect(arr(second.channels[0].nu)).toEqual([0.1, 0.2]);
    const done = reader.finish();
    expect(arr(done.state.line)).toEqual([2, 3, 4, 5]);
    expect(done.rows).toBe(4);
  });

  it('finish reads a last line without a line break', () => {
    const reader = new LogReader('last.csv');
    reader.push(encodeUtf8('t,p_x\n0,1\n1,2'));
    expect(reader.snapshot().state.length).toBe(1);
    expect(reader.finish().state.length).toBe(2);
  });
});

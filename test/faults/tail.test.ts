/**
 * Following a growing log (extension/node/tail.ts): appended rows are read on the next poll; a log truncated below
 * what was read, replaced by another file renamed over it, or rewritten in place (same inode, not shorter, bytes
 * already read changed) is read again from the start and a note says so; a deleted log is a plain error naming it. Real files; the rows carry x = k * i so two versions are told apart.
 */
import { describe, expect, it } from 'vitest';
import { appendFileSync, closeSync, mkdtempSync, openSync, renameSync, unlinkSync, writeFileSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { FileTail } from '../../extension/node/tail';

const dir = mkdtempSync(path.join(tmpdir(), 'residuum-tail-'));

function rows(from: number, to: number, k: number): string {
  const out: string[] = [];
  for (let i = from; i < to; i++) out.push(`${(i * 0.1).toFixed(1)},${k * i}\n`);
  return out.join('');
}
/** Write `text` over the file from byte `at` on, through a descriptor opened without truncation (same inode). */
function overwrite(p: string, text: string, at: number): void {
  const fd = openSync(p, 'r+');
  try {
    writeSync(fd, text, at);
  } finally {
    closeSync(fd);
  }
}
const px = (log: { state: { columns: Map<string, Float64Array>; length: number } }): number[] =>
  Array.from(log.state.columns.get('p_x') ?? []).slice(0, log.state.length);

describe('FileTail', () => {
  it('reads appended rows on each poll, without a note', async () => {
    const p = path.join(dir, 'grow.csv');
    writeFileSync(p, 't,p_x\n' + rows(0, 3, 1));
    const tail = new FileTail(p);
    expect(px((await tail.poll()).log)).toEqual([0, 1, 2]);
    appendFileSync(p, rows(3, 5, 1));
    const r = await tail.poll();
    expect(r.restarted).toBeUndefined();
    expect(px(r.log)).toEqual([0, 1, 2, 3, 4]);
    expect(r.log.diagnostics.some((d) => /being followed/.test(d.message))).toBe(false);
  });

  it('a truncated log is read again from the start, and a note says so', async () => {
    const p = path.join(dir, 'trunc.csv');
    writeFileSync(p, 't,p_x\n' + rows(0, 50, 1));
    const tail = new FileTail(p);
    expect((await tail.poll()).log.state.length).toBe(50);
    writeFileSync(p, 't,p_x\n' + rows(0, 2, 7)); // same inode, shorter
    const r = await tail.poll();
    expect(r.restarted).toBe('truncated');
    expect(px(r.log)).toEqual([0, 7]);
    expect(r.log.diagnostics.find((d) => /truncated while it was being followed/.test(d.message))?.message)
      .toMatch(/it was read again from the start/);
    // The note stays with the run on later polls.
    appendFileSync(p, rows(2, 3, 7));
    const later = await tail.poll();
    expect(later.restarted).toBeUndefined();
    expect(px(later.log)).toEqual([0, 7, 14]);
    expect(later.log.diagnostics.some((d) => /truncated while it was being followed/.test(d.message))).toBe(true);
  });

  it('a log replaced by a longer new file (rename over it) is noticed by its inode and read again', async () => {
    const p = path.join(dir, 'replace.csv');
    writeFileSync(p, 't,p_x\n' + rows(0, 3, 1));
    const tail = new FileTail(p);
    await tail.poll();
    writeFileSync(`${p}.new`, 't,p_x\n' + rows(0, 10, 5));
    renameSync(`${p}.new`, p);
    const r = await tail.poll();
    expect(r.restarted).toBe('replaced');
    expect(px(r.log)).toEqual(Array.from({ length: 10 }, (_, i) => 5 * i));
    expect(r.log.diagnostics.some((d) => /replaced by another file while it was being followed/.test(d.message))).toBe(true);
  });

  it('a log rewritten in place and grown past what was read (same inode, no truncation) is read again', async () => {
    // An estimator run again on the same path, its file opened without truncation: the new run's bytes overwrite
    // the old ones from the start, and by the next poll it is longer than what was read.
    const p = path.join(dir, 'rewrite.csv');
    writeFileSync(p, 't,p_x\n' + rows(0, 5, 1));
    const tail = new FileTail(p);
    await tail.poll();
    overwrite(p, 't,p_x\n' + rows(0, 40, 3), 0);
    const r = await tail.poll();
    expect(r.restarted).toBe('rewritten');
    expect(px(r.log)).toEqual(Array.from({ length: 40 }, (_, i) => 3 * i));
    expect(r.log.diagnostics.find((d) => /rewritten in place while it was being followed/.test(d.message))?.message)
      .toMatch(/it was read again from the start/);
    expect(r.log.diagnostics.filter((d) => d.kind === 'parse-error')).toEqual([]);
    // Then it is followed again as usual.
    appendFileSync(p, rows(40, 41, 3));
    const later = await tail.poll();
    expect(later.restarted).toBeUndefined();
    expect(px(later.log).at(-1)).toBe(120);
  });

  it('a header patched in place at the same length (the first bytes changed) is read again', async () => {
    const p = path.join(dir, 'patched.csv');
    writeFileSync(p, '# rows: 000\nt,p_x\n' + rows(0, 3, 1));
    const tail = new FileTail(p);
    await tail.poll();
    overwrite(p, '# rows: 003', 0);
    const r = await tail.poll();
    expect(r.restarted).toBe('rewritten');
    expect(px(r.log)).toEqual([0, 1, 2]);
  });

  it('bytes changed only just before the read offset (a long log: the last bytes read) are noticed', async () => {
    const p = path.join(dir, 'edge.csv');
    const text = 't,p_x\n' + rows(0, 2000, 1); // well over twice the witness windows
    writeFileSync(p, text);
    const tail = new FileTail(p);
    await tail.poll();
    overwrite(p, '2999', text.length - 5); // the last row, "199.9,1999\n", becomes "199.9,2999\n"
    appendFileSync(p, rows(2000, 2001, 1));
    expect((await tail.poll()).restarted).toBe('rewritten');
  });

  it('an unchanged log and a log written again with the same bytes are not restarted', async () => {
    const p = path.join(dir, 'same.csv');
    const text = 't,p_x\n' + rows(0, 3, 1);
    writeFileSync(p, text);
    const tail = new FileTail(p);
    await tail.poll();
    expect((await tail.poll()).restarted).toBeUndefined();
    overwrite(p, text + rows(3, 4, 1), 0); // the same bytes again, then one more row
    const r = await tail.poll();
    expect(r.restarted).toBeUndefined();
    expect(px(r.log)).toEqual([0, 1, 2, 3]);
  });

  it('a deleted log is a plain error naming it', async () => {
    const p = path.join(dir, 'gone.csv');
    writeFileSync(p, 't,p_x\n' + rows(0, 3, 1));
    const tail = new FileTail(p);
    await tail.poll();
    unlinkSync(p);
    await expect(tail.poll()).rejects.toThrow(/gone\.csv cannot be read: ENOENT/);
  });
});

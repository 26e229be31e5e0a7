/**
 * Confirmed resets through the notes store and the file analysis: a reset confirmed (a note with `reset: true`
 * written by the compare-and-retry store) splits the next analysis of the log into segments; un-confirming joins
 * them again. The log is a seeded Kalman-filter run of our own (test/core/resets/simKf.ts) written as a wide CSV.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { confirmResetOps, unconfirmResetOps } from '../../extension/core/notes/resets';
import type { ResetsBlock } from '../../extension/core/resets/index';
import { analyzeFile } from '../../extension/node/analyzeFile';
import { NotesStore, notesPathFor } from '../../extension/node/notesStore';
import { reportProblems } from '../helpers/reportSchema';
import { kfCsv, simulateKf } from '../core/resets/simKf';

let dir = '';
let log = '';

beforeAll(() => {
  dir = mkdtempSync(path.join(tmpdir(), 'residuum-resets-'));
  log = path.join(dir, 'kf.csv');
  writeFileSync(log, kfCsv(simulateKf({ seed: 7, resetAt_s: 60 })));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('a reset confirmed in the sidecar splits the analysis', () => {
  it('candidate -> confirm (store) -> two segments -> un-confirm -> one segment', async () => {
    const first = await analyzeFile(log);
    expect(reportProblems(first.report)).toEqual([]);
    const r0 = first.report.resets as ResetsBlock;
    expect(r0.candidates).toHaveLength(1);
    const cand = r0.candidates[0];
    expect(cand.t).toBe(60); // the CSV writes t with two decimals
    expect(cand.line).toBe(602); // header on line 1, epoch 600 on line 602
    expect(r0.segments).toHaveLength(1);

    const store = new NotesStore(notesPathFor(log));
    expect(store.reload()).toEqual([]);
    for (const op of confirmResetOps(store.notes(), cand.t, 0.05, { factor: cand.factor, block: cand.block })) store.edit(op);
    expect(store.save().saved).toBe(true);
    expect(readFileSync(notesPathFor(log), 'utf8')).toMatch(/"t":60,"channel":"[pv]","finding":"covariance-jump","reset":true/);

    const second = await analyzeFile(log);
    expect(reportProblems(second.report)).toEqual([]);
    const r1 = second.report.resets as ResetsBlock;
    expect(r1.confirmed).toEqual([60]);
    expect(r1.segments.map((s) => [s.t, s.start])).toEqual([[0, 'log'], [60, 'confirmed']]);
    expect(r1.candidates[0].confirmed).toBe(true);
    const segs = (second.report.errors as unknown as { segments: { t: number; velocity?: { convergence: { settleTime?: number } } }[] }).segments;
    expect(segs.map((s) => s.t)).toEqual([0, 60]);
    for (const s of segs) expect(s.velocity?.convergence.settleTime).toBeGreaterThan(0);
    expect((second.report.notes as { reset?: boolean; line?: number }[]).map((n) => [n.reset, n.line])).toEqual([[true, 602]]);
    expect(second.report.findings.some((f) => f.kind === 'covariance-jump')).toBe(false);

    for (const op of unconfirmResetOps(store.notes(), 60, 0.05)) store.edit(op);
    expect(store.save().saved).toBe(true);
    const third = await analyzeFile(log);
    expect((third.report.resets as ResetsBlock).segments).toHaveLength(1);
    expect(third.report.findings.filter((f) => f.kind === 'covariance-jump').map((f) => f.t)).toEqual([60]);
  });

  it('a malformed sidecar confirms nothing and says so in a finding, the log is still analysed', async () => {
    const other = path.join(dir, 'kf2.csv');
    writeFileSync(other, readFileSync(log));
    writeFileSync(notesPathFor(other), '{ "format": "residuum.notes/1", "notes": [ {"id": 1} ] }');
    const { report } = await analyzeFile(other);
    expect((report.resets as ResetsBlock).confirmed).toEqual([]);
    const f = report.findings.find((x) => x.kind === 'note' && x.file === notesPathFor(other));
    expect(f?.message).toMatch(/^notes not included: .*left untouched \(nor the filter resets confirmed in it\)$/);
  });
});

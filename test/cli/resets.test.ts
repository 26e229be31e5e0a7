/**
 * `analyze --reset-at T` (repeatable), `--jump-factor F` and the resets confirmed in the notes sidecar, as a CI job
 * runs the built tool (`node dist/cli.js`). The log is a seeded Kalman-filter run of our own with a
 * re-initialisation at 60 s (test/core/resets/simKf.ts).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync, execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { serializeNotes } from '../../extension/core/notes/sidecar';
import { resetNote } from '../../extension/core/notes/resets';
import { reportProblems } from '../helpers/reportSchema';
import { kfCsv, simulateKf } from '../core/resets/simKf';

const root = path.resolve(__dirname, '../..');
const cli = path.join(root, 'dist/cli.js');
let dir = '';
let log = '';

function run(...args: string[]): { code: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [cli, ...args], { cwd: dir, encoding: 'utf8', timeout: 120_000 });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

interface Resets {
  confirmed: number[];
  factor: number;
  candidates: { t: number; confirmed: boolean }[];
  segments: { t: number; start: string }[];
}

beforeAll(() => {
  execFileSync(process.execPath, [path.join(root, 'scripts/build.mjs')], { cwd: root, stdio: 'inherit' });
  dir = mkdtempSync(path.join(tmpdir(), 'residuum-cli-resets-'));
  log = path.join(dir, 'kf.csv');
  writeFileSync(log, kfCsv(simulateKf({ seed: 11, resetAt_s: 60 })));
}, 180_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('analyze with resets', () => {
  it('without --reset-at: one segment, the candidate listed in the report and the summary', () => {
    const r = run('analyze', log, '--json');
    expect(r.code).toBe(0);
    const report = JSON.parse(r.stdout);
    expect(reportProblems(report)).toEqual([]);
    const resets = report.resets as Resets;
    expect(resets.segments).toHaveLength(1);
    expect(resets.candidates.map((c) => [c.t, c.confirmed])).toEqual([[60, false]]);
    const text = run('analyze', log);
    expect(text.stdout).toMatch(/Covariance jumps not confirmed as resets/);
    expect(text.stdout).toMatch(/covariance-jump 1/);
  });

  it('--reset-at (repeatable) splits the run; segments in the report and the summary', () => {
    const r = run('analyze', log, '--json', '--reset-at', '60', '--reset-at', '90');
    expect(r.code).toBe(0);
    const report = JSON.parse(r.stdout);
    expect(reportProblems(report)).toEqual([]);
    const resets = report.resets as Resets;
    expect(resets.confirmed).toEqual([60, 90]);
    expect(resets.segments.map((s) => [s.t, s.start])).toEqual([[0, 'log'], [60, 'confirmed'], [90, 'confirmed']]);
    expect(report.errors.segments.map((s: { t: number }) => s.t)).toEqual([0, 60, 90]);
    const text = run('analyze', log, '--reset-at', '60');
    expect(text.stdout).toMatch(/Segments \(a filter restart starts each/);
    expect(text.stdout).toMatch(/confirmed reset/);
  });

  it('reads the resets confirmed in the sidecar, and joins them with --reset-at', () => {
    writeFileSync(`${log}.notes.json`, serializeNotes([resetNote(60, { factor: 500, block: 'v' }, '2026-12-02')]));
    const r = run('analyze', log, '--json');
    expect(r.code).toBe(0);
    const resets = JSON.parse(r.stdout).resets as Resets;
    expect(resets.confirmed).toEqual([60]);
    expect(resets.candidates[0].confirmed).toBe(true);
    const both = JSON.parse(run('analyze', log, '--json', '--reset-at', '30').stdout).resets as Resets;
    expect(both.confirmed).toEqual([30, 60]);
    rmSync(`${log}.notes.json`);
  });

  it('--jump-factor sets the threshold; bad values exit 2 with one line', () => {
    const high = JSON.parse(run('analyze', log, '--json', '--jump-factor', '1e9').stdout).resets as Resets;
    expect(high.factor).toBe(1e9);
    expect(high.candidates).toEqual([]);
    for (const args of [['--reset-at', 'soon'], ['--reset-at', ''], ['--jump-factor', '1']]) {
      const r = run('analyze', log, ...args);
      expect(r.code).toBe(2);
      const lines = r.stderr.trimEnd().split('\n');
      expect(lines).toHaveLength(1);
      expect(lines[0]).toMatch(/^residuum: --(reset-at|jump-factor)/);
    }
  });
});

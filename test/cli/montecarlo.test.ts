/**
 * `residuum montecarlo`: N runs of one scenario, N-run average NEES/NIS per epoch against Bar-Shalom's
 * chi2(N n)/N bounds (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4; interval values checked in
 * test/core/errors/montecarlo.test.ts against reference-checks sec. 2.2). Runs are seeded logs of our own demo
 * generator (invented scene): consistent runs keep about 95% of epochs inside; runs with the injected
 * overconfident interval fall outside there.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { spawnSync, execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, mkdirSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { generateWarehouseLog } from '../../extension/core/demo/warehouse';
import { chi2MeanInterval } from '../../extension/core/stats/chi2';

const root = path.resolve(__dirname, '../..');
const cli = path.join(root, 'dist/cli.js');
let dir = '';

function run(...args: string[]) {
  const r = spawnSync(process.execPath, [cli, ...args], { cwd: dir, encoding: 'utf8', timeout: 180_000, maxBuffer: 256 * 1024 * 1024 });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

beforeAll(() => {
  if (!existsSync(cli)) execFileSync(process.execPath, [path.join(root, 'scripts/build.mjs')], { cwd: root, stdio: 'inherit' });
  dir = mkdtempSync(path.join(tmpdir(), 'residuum-mc-'));
  mkdirSync(path.join(dir, 'clean'));
  mkdirSync(path.join(dir, 'faulty'));
  for (const seed of [31, 32, 33, 34]) {
    writeFileSync(path.join(dir, 'clean', `run${seed}.csv`), [...generateWarehouseLog({ duration_s: 20, seed, faults: false, imuRate_hz: 0 })].join(''));
    writeFileSync(path.join(dir, 'faulty', `run${seed}.csv`), [...generateWarehouseLog({ duration_s: 30, seed, faults: true, imuRate_hz: 0 })].join(''));
  }
}, 180_000);

describe('montecarlo', () => {
  it('consistent runs: N-run averages inside the chi2(N n)/N bounds at about 95% of epochs', () => {
    const r = run('montecarlo', 'clean', '--json');
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.runs).toBe(4);
    expect(out.files).toHaveLength(4);
    const [lo, hi] = chi2MeanInterval(0.95, 3, 4);
    expect(out.nees.position.bounds95[0]).toBeCloseTo(lo, 9);
    expect(out.nees.position.bounds95[1]).toBeCloseTo(hi, 9);
    for (const block of ['position', 'velocity', 'orientation']) {
      expect(out.nees[block].inside95).toBeGreaterThan(0.9);
      expect(out.nees[block].inside95).toBeLessThan(0.99);
    }
    expect(out.nis.tdoa.inside95).toBeGreaterThan(0.9);
  });

  it('runs with an overconfident interval: fewer NIS averages inside than the consistent runs', () => {
    const clean = JSON.parse(run('montecarlo', 'clean', '--json').stdout);
    const r = run('montecarlo', 'faulty', '--json', '--per-epoch');
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.nis.tdoa.inside95).toBeLessThan(clean.nis.tdoa.inside95 - 0.05);
    expect(out.nis.tdoa.t.length).toBe(out.nis.tdoa.average.length);
  });

  it('one run is a bad argument (exit 2, one line)', () => {
    const r = run('montecarlo', path.join('clean', 'run31.csv'));
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/two or more runs/);
  });

  it('a folder without logs is an unreadable input (exit 2, one line)', () => {
    mkdirSync(path.join(dir, 'empty'), { recursive: true });
    writeFileSync(path.join(dir, 'empty', 'readme.txt'), 'no logs here');
    const r = run('montecarlo', 'empty', 'clean');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/holds no logs/);
  });
});

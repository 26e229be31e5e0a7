/**
 * The command-line tool as a CI job runs it: `node dist/cli.js` spawned after a build, exit codes (report contract:
 * 0 ok, 1 a check threshold failed, 2 unreadable input, bad argument or no threshold) and the one line on stderr, for
 * every threshold, a missing file, a folder, a device, a binary file, a malformed gate file and bad options.
 * Logs are seeded runs of our own demo generator (invented scene).
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { spawnSync, execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, readFileSync, existsSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { generateWarehouseLog } from '../../extension/core/demo/warehouse';
import { reportProblems } from '../helpers/reportSchema';

const root = path.resolve(__dirname, '../..');
const cli = path.join(root, 'dist/cli.js');
let dir = '';
let clean = '';
let faulty = '';

interface Run {
  code: number | null;
  stdout: string;
  stderr: string;
}

function run(...args: string[]): Run {
  const r = spawnSync(process.execPath, [cli, ...args], { cwd: dir, encoding: 'utf8', timeout: 120_000 });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

/** Exit 2 with exactly one stderr line matching `re`. */
function expectUsage(r: Run, re: RegExp, code = 2): void {
  expect(r.code).toBe(code);
  const lines = r.stderr.trimEnd().split('\n');
  expect(lines).toHaveLength(1);
  expect(lines[0]).toMatch(/^residuum: /);
  expect(lines[0]).toMatch(re);
}

beforeAll(() => {
  execFileSync(process.execPath, [path.join(root, 'scripts/build.mjs')], { cwd: root, stdio: 'inherit' });
  dir = mkdtempSync(path.join(tmpdir(), 'residuum-cli-'));
  clean = path.join(dir, 'clean.csv');
  faulty = path.join(dir, 'faulty.csv');
  writeFileSync(clean, [...generateWarehouseLog({ duration_s: 20, seed: 21, faults: false, imuRate_hz: 20 })].join(''));
  writeFileSync(faulty, [...generateWarehouseLog({ duration_s: 20, seed: 21, faults: true, imuRate_hz: 20 })].join(''));
}, 180_000);

describe('analyze', () => {
  it('prints the JSON report, writes --out, --html and --md (exit 0)', () => {
    const r = run('analyze', clean, '--json', '--out', 'r.json', '--html', 'r.html', '--md', 'r.md');
    expect(r.code).toBe(0);
    const report = JSON.parse(r.stdout);
    expect(reportProblems(report)).toEqual([]);
    expect(JSON.parse(readFileSync(path.join(dir, 'r.json'), 'utf8'))).toEqual(report);
    const html = readFileSync(path.join(dir, 'r.html'), 'utf8');
    const md = readFileSync(path.join(dir, 'r.md'), 'utf8');
    for (const text of [html, md]) {
      expect(text).toContain(report.source.sha256);
      expect(text).toContain('clean');
      expect(text).toContain('0.1.0');
    }
    expect(readFileSync(path.join(dir, 'r.json'), 'utf8').endsWith('\n')).toBe(true);
  });
  it('a missing file is exit 2 with one line naming it', () => expectUsage(run('analyze', 'nope.csv'), /log not found: nope\.csv/));
  it('a folder given as a file is exit 2', () => expectUsage(run('analyze', dir), /is a folder, not a file/));
  it('a device is exit 2', () => expectUsage(run('analyze', '/dev/null'), /not a regular file/));
  it('a binary file is exit 2 with the first reader problem and its line', () => {
    const bin = path.join(dir, 'noise.bin');
    const bytes = Buffer.alloc(4000);
    for (let i = 0; i < bytes.length; i++) bytes[i] = (i * 7919 + 13) % 251;
    writeFileSync(bin, bytes);
    expectUsage(run('analyze', bin), /cannot be read as an estimator log \(.*noise\.bin:\d+/);
  });
  it('an unknown option is exit 2 with one line', () => expectUsage(run('analyze', clean, '--frobnicate'), /Unknown option '--frobnicate'/));
  it('a bad number is exit 2', () => expectUsage(run('analyze', clean, '--confidence', 'abc'), /--confidence needs a number, got 'abc'/));
  it('an unknown IMU preset is exit 2', () => expectUsage(run('analyze', clean, '--imu-preset', 'bogus'), /--imu-preset must be one of/));
  it('an unknown verb is exit 2', () => expectUsage(run('frobnicate'), /unknown command 'frobnicate'/));
  it('an output that cannot be written is exit 2 and leaves no file', () => {
    expectUsage(run('analyze', clean, '--html', path.join(dir, 'no/such/folder/r.html')), /cannot write .*r\.html \(ENOENT\)/);
    expect(existsSync(path.join(dir, 'no'))).toBe(false);
  });
});

describe('check', () => {
  it('with no threshold is exit 2', () => expectUsage(run('check', clean), /check needs at least one threshold/));
  it('a missing log is exit 2 even with thresholds', () => expectUsage(run('check', 'gone.csv', '--max-outliers', '5'), /log not found: gone\.csv/));
  it('passes generous thresholds (exit 0) and prints what passed', () => {
    const r = run('check', clean, '--max-outliers', '1000', '--min-inside95', '0.5', '--max-rmse', '100', '--max-settle-time', '1000');
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    expect(r.stdout).toMatch(/PASS +all channels: outliers/);
    expect(r.stdout).toMatch(/PASS +position RMSE/);
    expect(r.stdout).toMatch(/PASS +settling time/);
    expect(r.stdout).toMatch(/\d+ passed, 0 failed/);
  });
  // Each threshold failing on its own: exit 1, the failed check named on one stderr line and marked FAIL on stdout.
  const cases: [string, string[], RegExp][] = [
    ['--max-outliers', ['--max-outliers', '0'], /all channels: outliers/],
    ['--min-inside95', ['--min-inside95', '0.999'], /tdoa: NIS inside 95% bounds/],
    ['--max-rmse', ['--max-rmse', '0.001'], /position RMSE/],
    ['--max-settle-time', ['--max-settle-time', '0'], /settling time/],
  ];
  for (const [name, args, re] of cases) {
    it(`fails ${name} with exit 1`, () => {
      const r = run('check', faulty, ...args);
      expectUsage(r, new RegExp(`check failed: .*${re.source}`), 1);
      expect(r.stdout).toMatch(new RegExp(`FAIL +${re.source}`));
    });
  }
  it('a gate file: per-channel and overall thresholds, each failure listed', () => {
    const gate = path.join(dir, 'residuum.gate.json');
    writeFileSync(gate, JSON.stringify({ maxOutliers: 100000, maxRmse_m: 100, maxVelocityRmse_mps: 0.0001, maxOrientationRmseDeg: 100, channels: { tdoa: { maxOutliers: 0 }, mag: { minInside95: 0 } } }));
    const r = run('check', faulty, '--gate', gate);
    expectUsage(r, /check failed: tdoa: outliers; velocity RMSE$/, 1);
    expect(r.stdout).toMatch(/PASS +mag: NIS inside/);
  });
  it('a gate naming a channel the log lacks fails', () => {
    const gate = path.join(dir, 'other.gate.json');
    writeFileSync(gate, JSON.stringify({ channels: { gnss: { maxOutliers: 3 } } }));
    expectUsage(run('check', clean, '--gate', gate), /check failed: gnss: channel/, 1);
  });
  it('a gate file that is not JSON is exit 2 with line and column', () => {
    const gate = path.join(dir, 'broken.gate.json');
    writeFileSync(gate, '{\n  "maxOutliers": 3,\n  "maxRmse_m": ,\n}\n');
    expectUsage(run('check', clean, '--gate', gate), /gate file .*broken\.gate\.json:3:16 is not valid JSON: ValueExpected/);
  });
  it('a gate file with an unknown key or a bad value is exit 2 naming it', () => {
    const gate = path.join(dir, 'typo.gate.json');
    writeFileSync(gate, JSON.stringify({ maxOutlier: 3 }));
    expectUsage(run('check', clean, '--gate', gate), /gate file .* is malformed: must NOT have additional properties \('maxOutlier'\)/);
    writeFileSync(gate, JSON.stringify({ channels: { tdoa: { minInside95: 1.5 } } }));
    expectUsage(run('check', clean, '--gate', gate), /malformed at \/channels\/tdoa\/minInside95: must be <= 1/);
  });
  it('a missing gate file or a folder is exit 2', () => {
    expectUsage(run('check', clean, '--gate', 'none.json'), /gate file not found: none\.json/);
    expectUsage(run('check', clean, '--gate', dir), /gate file is a folder/);
  });
  it('bad threshold values are exit 2', () => {
    expectUsage(run('check', clean, '--max-outliers', '2.5'), /--max-outliers needs a whole number/);
    expectUsage(run('check', clean, '--min-inside95', '1.5'), /--min-inside95 must lie in \[0, 1\]/);
    expectUsage(run('check', clean, '--max-rmse=-1'), /--max-rmse must lie in/);
  });
  it('a stored baseline: the same run passes, a degraded one fails, exit 1', () => {
    expect(run('analyze', clean, '--out', 'base.json').code).toBe(0);
    expect(reportProblems(JSON.parse(readFileSync(path.join(dir, 'base.json'), 'utf8')))).toEqual([]);
    const same = run('check', clean, '--baseline', 'base.json', '--tolerance', '0');
    expect(same.code).toBe(0);
    const worse = run('check', faulty, '--baseline', 'base.json', '--tolerance', '10');
    expectUsage(worse, /check failed: .*tdoa: outliers vs baseline/, 1);
    expect(worse.stdout).toMatch(/FAIL +tdoa: outliers: \d+ vs baseline \d+/);
  });
  it('baseline misuse is exit 2', () => {
    expectUsage(run('check', clean, '--baseline', 'base.json'), /--baseline needs --tolerance/);
    expectUsage(run('check', clean, '--tolerance', '5'), /--tolerance needs --baseline/);
    writeFileSync(path.join(dir, 'notreport.json'), '{"a": 1}');
    expectUsage(run('check', clean, '--baseline', 'notreport.json', '--tolerance', '5'), /is not a residuum\.report\/1 report/);
  });
});

describe('compare', () => {
  it('prints the figures side by side with the common span (exit 0)', () => {
    const r = run('compare', clean, faulty);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/common span 0 \.\. 19\.990 s/);
    expect(r.stdout).toMatch(/tdoa: outliers +0 +\d+ \(\+\d+\) +A/);
  });
  it('--json: figures, overlays and schema-valid reports; --html and --md written', () => {
    mkdirSync(path.join(dir, 'out'), { recursive: true });
    const r = run('compare', clean, faulty, '--align', 'start', '--json', '--html', 'out/c.html', '--md', 'out/c.md');
    expect(r.code).toBe(0);
    const c = JSON.parse(r.stdout);
    expect(c.schema).toBe('residuum.compare/1');
    expect(c.runs).toHaveLength(2);
    for (const rep of c.reports) expect(reportProblems(rep)).toEqual([]);
    expect(c.overlays.length).toBeGreaterThan(0);
    expect(readFileSync(path.join(dir, 'out/c.html'), 'utf8')).toContain('<svg');
    expect(readFileSync(path.join(dir, 'out/c.md'), 'utf8')).toContain('common span');
  });
  it('one log, a bad alignment, or an event missing from a run is exit 2', () => {
    expectUsage(run('compare', clean), /compare takes two or more logs, got 1/);
    expectUsage(run('compare', clean, faulty, '--align', 'sideways'), /--align must be time or start/);
    expectUsage(run('compare', clean, faulty, '--align-event', 'nonsense'), /--align-event needs a finding kind/);
    expectUsage(run('compare', clean, faulty, '--align-event', 'bad-rotation'), /cannot compare: run A .* has no 'bad-rotation' finding/);
  });
  it('runs without a common span are exit 2', () => {
    const late = path.join(dir, 'late.csv');
    writeFileSync(late, [...generateWarehouseLog({ duration_s: 5, seed: 3, faults: false, t0_s: 100, imuRate_hz: 0 })].join(''));
    expectUsage(run('compare', clean, late), /cannot compare: the runs share no common time span after aligning by log time/);
    expect(run('compare', clean, late, '--align', 'start').code).toBe(0);
  });
});

/**
 * Unreadable inputs and the files of a run, through the command-line tool spawned as a CI job runs it (a bundle of
 * extension/cli/main.ts made here with esbuild, the same entry as dist/cli.js, so this suite does not race the
 * build of other suites): a FIFO (must not block: the path is looked up before any open), a folder, a missing file,
 * each as the log and as --anchors / --reference / --map; exit 2 and one line on stderr. A mapping file's paths
 * resolve relative to the mapping file (not the working folder, not the log), are only read (never executed or
 * written), and `report.source.files` lists every file read. `--memory-budget` gives a partial, schema-valid report.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { chmodSync, existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import * as esbuild from 'esbuild';
import { reportProblems } from '../helpers/reportSchema';
import type { Report } from '../../extension/core/report';

const root = path.resolve(__dirname, '../..');
const dir = mkdtempSync(path.join(tmpdir(), 'residuum-faults-cli-'));
const cli = path.join(dir, 'bin', 'cli.js');
const work = path.join(dir, 'cwd');
let fifo = '';

interface Run { code: number | null; stdout: string; stderr: string; signal: NodeJS.Signals | null }

function run(...args: string[]): Run {
  // The timeout only catches a hang (a blocked FIFO open); no assertion is about time.
  const r = spawnSync(process.execPath, [cli, ...args], { cwd: work, encoding: 'utf8', timeout: 60_000 });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr, signal: r.signal };
}

function expectOneLine(r: Run, re: RegExp): void {
  expect(r.signal).toBeNull();
  expect(r.code).toBe(2);
  const lines = r.stderr.trimEnd().split('\n');
  expect(lines).toHaveLength(1);
  expect(lines[0]).toMatch(/^residuum: /);
  expect(lines[0]).toMatch(re);
}

/** A small CSV log with a state stream and a 1-D channel. */
function log(n: number): string {
  const rows = ['t,p_x,p_y,p_z,nu_uwb,S_uwb'];
  for (let i = 0; i < n; i++) rows.push(`${(i * 0.1).toFixed(1)},${i * 0.1},0,1,${((i * 37) % 11 - 5) / 10},0.25`);
  return rows.join('\n') + '\n';
}

beforeAll(async () => {
  mkdirSync(work);
  await esbuild.build({
    entryPoints: [path.join(root, 'extension/cli/main.ts')], outfile: cli, bundle: true, platform: 'node', format: 'cjs',
    target: 'node20', logLevel: 'error', alias: { 'jsonc-parser': path.join(root, 'node_modules/jsonc-parser/lib/esm/main.js') },
  });
  writeFileSync(path.join(work, 'ok.csv'), log(200));
  mkdirSync(path.join(work, 'folder.csv'));
  fifo = path.join(work, 'pipe.csv');
  const made = spawnSync('mkfifo', [fifo]);
  if (made.status !== 0) fifo = '';
}, 120_000);

describe('unreadable inputs: exit 2 and one plain line', () => {
  it('a FIFO as the log is refused without blocking', () => {
    if (!fifo) return console.log('mkfifo is not available here: the FIFO case was not exercised');
    expectOneLine(run('analyze', fifo), /log is not a regular file .*pipe\.csv/);
  });

  it('a FIFO as --anchors, --reference or --map is refused without blocking', () => {
    if (!fifo) return console.log('mkfifo is not available here: the FIFO case was not exercised');
    expectOneLine(run('analyze', 'ok.csv', '--anchors', fifo), /anchors file is not a regular file/);
    expectOneLine(run('analyze', 'ok.csv', '--reference', fifo), /reference file is not a regular file/);
    expectOneLine(run('analyze', 'ok.csv', '--map', fifo), /mapping file is not a regular file/);
  });

  it('a folder given as the log or as any other file', () => {
    expectOneLine(run('analyze', 'folder.csv'), /log is a folder, not a file: folder\.csv/);
    expectOneLine(run('analyze', 'ok.csv', '--anchors', 'folder.csv'), /anchors file is a folder/);
    expectOneLine(run('analyze', 'ok.csv', '--map', 'folder.csv'), /mapping file is a folder/);
  });

  it('a missing file as the log, the map, the anchors or the reference', () => {
    expectOneLine(run('analyze', 'absent.csv'), /log not found: absent\.csv/);
    expectOneLine(run('analyze', 'ok.csv', '--map', 'absent.map.json'), /mapping file not found: absent\.map\.json/);
    expectOneLine(run('analyze', 'ok.csv', '--anchors', 'absent.csv'), /anchors file not found/);
    expectOneLine(run('analyze', 'ok.csv', '--reference', 'absent.csv'), /reference file not found/);
    expectOneLine(run('check', 'absent.csv', '--max-outliers', '3'), /log not found/);
  });

  it('a bad --memory-budget is a usage error', () => {
    expectOneLine(run('analyze', 'ok.csv', '--memory-budget', 'lots'), /--memory-budget needs a number/);
    expectOneLine(run('analyze', 'ok.csv', '--memory-budget', '0'), /--memory-budget must lie in/);
  });
});

describe('--memory-budget', () => {
  it('a log over the budget gives a partial, schema-valid report that says what was kept', () => {
    writeFileSync(path.join(work, 'long.csv'), log(40_000));
    const r = run('analyze', 'long.csv', '--json', '--memory-budget', '0.5');
    expect(r.code).toBe(0);
    const report = JSON.parse(r.stdout) as Report;
    expect(reportProblems(report)).toEqual([]);
    expect(report.partial).toBe(true);
    expect(report.source.rows).toBe(40_000);
    expect(report.time.epochs).toBeLessThan(40_000);
    expect(report.findings.some((f) => /more than the 512 KiB memory budget: .*every \d+(st|nd|rd|th) state record was kept/.test(f.message))).toBe(true);
    const summary = run('analyze', 'long.csv', '--memory-budget', '0.5');
    expect(summary.stdout).toMatch(/PARTIAL/);
    const whole = JSON.parse(run('analyze', 'long.csv', '--json').stdout) as Report;
    expect(whole.partial).toBe(false);
    expect(whole.time.epochs).toBe(40_000);
  });
});

describe('the files of a run named by a mapping file', () => {
  it('resolve relative to the mapping file, are only read, never run, and all appear in source.files', () => {
    const runDir = path.join(dir, 'run');
    const maps = path.join(dir, 'maps');
    const data = path.join(dir, 'data');
    for (const d of [runDir, maps, data]) mkdirSync(d);
    const logPath = path.join(runDir, 'flight.csv');
    writeFileSync(logPath, 'time,north,east,up\n0,0,0,1\n0.1,0.1,0,1\n0.2,0.2,0,1\n');
    // Same names beside the log and in the working folder, with other contents: they must not be read.
    writeFileSync(path.join(runDir, 'anchors.csv'), 'id,x,y,z\nWRONG,9,9,9\n');
    writeFileSync(path.join(work, 'anchors.csv'), 'id,x,y,z\nWRONG,9,9,9\n');
    writeFileSync(path.join(data, 'anchors.csv'), 'id,x,y,z\nA1,0,0,2\nA2,10,0,2\nA3,0,10,2\n');
    writeFileSync(path.join(maps, 'truth.csv'), 't,p_x,p_y,p_z\n0,0,0,1\n0.1,0.1,0,1\n0.2,0.2,0,1\n');
    // An executable script named as a measurement file: read as (bad) data, never run.
    const script = path.join(maps, 'extra.csv');
    writeFileSync(script, `#!/bin/sh\ntouch ${path.join(dir, 'EXECUTED')}\n`);
    chmodSync(script, 0o755);
    const mapPath = path.join(maps, 'flight.map.json');
    writeFileSync(mapPath, JSON.stringify({
      columns: { time: 't', north: 'p_x', east: 'p_y', up: 'p_z' },
      anchors: '../data/anchors.csv',
      reference: 'truth.csv',
      files: [{ path: 'extra.csv', role: 'measurements' }],
    }));
    const before = new Map([runDir, maps, data].flatMap((d) => readdirSync(d).map((f) => {
      const p = path.join(d, f);
      return [p, `${statSync(p).mtimeMs}:${readFileSync(p, 'utf8')}`] as const;
    })));

    const r = run('analyze', logPath, '--map', mapPath, '--json');
    expect(r.code).toBe(0);
    const report = JSON.parse(r.stdout) as Report & { uwb?: unknown };
    expect(reportProblems(report)).toEqual([]);
    expect(new Set(report.source.files)).toEqual(new Set([logPath, mapPath, path.join(maps, 'extra.csv'),
      path.join(maps, 'truth.csv'), path.join(maps, '../data/anchors.csv')].map((p) => path.normalize(p))));
    expect(JSON.stringify(report)).not.toContain('WRONG');
    expect(existsSync(path.join(dir, 'EXECUTED'))).toBe(false);
    // Nothing was written beside the log, the mapping file or the anchors: same files, same bytes, same times.
    for (const d of [runDir, maps, data]) for (const f of readdirSync(d)) {
      const p = path.join(d, f);
      expect(before.get(p)).toBe(`${statSync(p).mtimeMs}:${readFileSync(p, 'utf8')}`);
    }
    // The reference was read: errors against it are in the report.
    expect(report.errors).toBeDefined();
  });

  it('a missing file named by the mapping is a finding naming the mapping file and where it was looked for', () => {
    const maps = path.join(dir, 'maps2');
    mkdirSync(maps);
    const mapPath = path.join(maps, 'm.map.json');
    writeFileSync(mapPath, JSON.stringify({ anchors: 'nowhere/anchors.csv' }));
    const r = run('analyze', 'ok.csv', '--map', mapPath, '--json');
    expect(r.code).toBe(0);
    const report = JSON.parse(r.stdout) as Report;
    const f = report.findings.find((x) => /nowhere\/anchors\.csv/.test(x.message));
    expect(f?.message).toMatch(/not found \(relative to .*maps2\/m\.map\.json\)/);
    expect(report.source.files).not.toContain(path.join(maps, 'nowhere/anchors.csv'));
  });
});

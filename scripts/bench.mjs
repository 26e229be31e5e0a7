// `npm run bench`: end-to-end speed and memory of `residuum analyze` on generated logs of the demo scene, beside a
// plain Node read of the same file and the peer pandas script (../shared/bench/peer_pandas.py), with ratios.
// Every figure is a whole separate process (wall time, peak resident memory), the median of --runs runs.
//
// usage: node scripts/bench.mjs [--rows N=250000] [--big-rows N=2500000] [--no-big] [--runs N=3] [--big-runs N=1]
//                               [--allan N=10000000] [--huge] [--keep]
//   --huge  also a ~2 GB log (memory-bound run; takes minutes)
//   --keep  keep the generated logs in bench-output/ (default: the big and huge logs are deleted afterwards)
// Writes bench-output/bench.md (the Markdown table) and bench-output/bench.json.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, statSync, unlinkSync, writeFileSync, openSync, readSync, closeSync } from 'node:fs';
import { dirname, resolve, relative } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import { loadavg, cpus } from 'node:os';
import { ensureBundle, newestSource } from './bench/bundle.mjs';
import { measure, measureInterleaved, measureOnce, median, peakMethod } from './bench/measure.mjs';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
process.chdir(ROOT);
const OUT = resolve(ROOT, 'bench-output');
mkdirSync(OUT, { recursive: true });

const { values: opt } = parseArgs({
  options: {
    rows: { type: 'string', default: '250000' }, 'big-rows': { type: 'string', default: '2500000' },
    'no-big': { type: 'boolean' }, runs: { type: 'string', default: '5' }, 'big-runs': { type: 'string', default: '1' },
    allan: { type: 'string', default: '10000000' }, huge: { type: 'boolean' }, keep: { type: 'boolean' },
  },
});
const ROWS = Number(opt.rows);
const BIG_ROWS = Number(opt['big-rows']);
const RUNS = Math.max(1, Number(opt.runs));
const BIG_RUNS = Math.max(1, Number(opt['big-runs']));
const ALLAN_N = Number(opt.allan);
const NODE = process.execPath;
const notes = [];
const loadStart = loadavg()[0];
const log = (s) => process.stderr.write(s + '\n');

// ---------------------------------------------------------------- tools
const GEN = await ensureBundle('scripts/gen-demo.ts', 'dist/gen-demo.js', ['extension/core']);

/** dist/cli.js, rebuilt with build.mjs's options when older than the sources; undefined (with a note) if unavailable. */
async function ensureCli() {
  const out = 'dist/cli.js';
  if (!existsSync('extension/cli/main.ts')) {
    notes.push('The CLI (extension/cli/main.ts) does not exist yet: the `residuum analyze` rows were skipped.');
    return undefined;
  }
  if (!existsSync(out) || !existsSync('dist/cliMain.js') || statSync(out).mtimeMs < newestSource(['extension'])) {
    // The same build as `npm run build` (dist/cli.js is the launcher, dist/cliMain.js the tool), so the bench times
    // exactly what a user runs.
    const r = spawnSync(process.execPath, ['scripts/build.mjs'], { encoding: 'utf8' });
    if (r.status !== 0) {
      notes.push(`The CLI does not build yet (${(r.stderr || r.stdout || '').split('\n').find((l) => l.trim()) ?? 'build failed'}): the \`residuum analyze\` rows were skipped.`);
      return undefined;
    }
  }
  return out;
}
const CLI = await ensureCli();

/** What the launcher (extension/cli/launch.ts) chooses on this machine, asked of a fresh process (its probe wants fresh memory). */
function launcherDecision() {
  const code = `const l = require(${JSON.stringify(resolve(ROOT, 'dist/cli.js'))}); const us = l.pageFaultCost_us();
const env = { ...process.env, RESIDUUM_HUGE_PAGES: us >= l.SLOW_FAULT_US ? '1' : '0' };
const plan = l.launchPlan(env, process.platform, 'analyze', require('os').availableParallelism());
console.log(JSON.stringify({ us, slow: l.SLOW_FAULT_US, flags: plan.flags || [], huge: plan.how === 'child', how: plan.how }));`;
  const r = spawnSync(NODE, ['-e', code], { encoding: 'utf8', env: { ...process.env, RESIDUUM_HUGE_PAGES: '', RESIDUUM_NO_REEXEC: '', RESIDUUM_LAUNCHED: '' } });
  try {
    const d = JSON.parse(r.stdout);
    const where = { here: 'the tool runs in the first thread', thread: 'the tool runs in a worker thread (a new isolate for the flags)', child: 'a child process' }[d.how];
    return `${where}; V8 flags ${d.flags.length ? d.flags.join(' ') : 'none'}; ` +
      `huge pages ${d.huge ? 'on' : 'off'} (a first write to a fresh 4 KiB page cost ${d.us.toFixed(1)} us in the probe; threshold ${d.slow} us)`;
  } catch {
    return undefined;
  }
}
const launcher = CLI && process.platform === 'linux' ? launcherDecision() : undefined;

/** A python3 that can import pandas (the first python3 on PATH may be a version manager's shim without it). */
function findPython() {
  for (const py of ['python3', '/usr/bin/python3', '/usr/local/bin/python3']) {
    const r = spawnSync(py, ['-c', 'import pandas, numpy'], { stdio: 'ignore' });
    if (r.status === 0) return py;
  }
  return undefined;
}
const PEER = resolve(ROOT, '../shared/bench/peer_pandas.py');
const PYTHON = existsSync(PEER) ? findPython() : undefined;
if (!existsSync(PEER)) notes.push(`The peer script ${PEER} is absent: its row was skipped.`);
else if (!PYTHON) notes.push('No python3 with pandas on this machine (apt: python3-pandas): the peer row was skipped.');

// ---------------------------------------------------------------- logs
/** Generate a benchmark log unless an up-to-date one exists; returns { file, bytes, rows, gen_s }. */
function benchLog(rows, format) {
  const file = resolve(OUT, `bench-${rows}.${format}`);
  let gen_s;
  if (!existsSync(file) || statSync(file).mtimeMs < statSync(GEN).mtimeMs) {
    log(`generating ${relative(ROOT, file)} ...`);
    const r = spawnSync(NODE, [GEN, '--bench', '--rows', String(rows), '--format', format, '--out', file], { encoding: 'utf8' });
    if (r.status !== 0) throw new Error(`gen-demo failed: ${r.stderr.split('\n')[0]}`);
    gen_s = JSON.parse(r.stdout).seconds;
  }
  const bytes = statSync(file).size;
  return { file, bytes, rows: dataRecords(file, format), gen_s };
}

/** Data records in a log: lines minus the CSV's metadata and header (JSON Lines: every line). */
function dataRecords(file, format) {
  const r = spawnSync(NODE, ['scripts/bench/newlines.mjs', file], { encoding: 'utf8' });
  const lines = JSON.parse(r.stdout).lines;
  if (format !== 'csv') return lines;
  const fd = openSync(file, 'r');
  const head = Buffer.alloc(65536);
  const n = readSync(fd, head, 0, head.length, 0);
  closeSync(fd);
  const headLines = head.subarray(0, n).toString('utf8').split('\n');
  let k = 0;
  while (k < headLines.length && headLines[k].startsWith('#')) k++;
  return lines - k - 1;
}

// ---------------------------------------------------------------- runs
const results = [];
const MB = 1e6;
function addRow(what, input, m, extra = {}) {
  results.push({ what, input: input ? relative(ROOT, input.file) : '', bytes: input?.bytes, rows: input?.rows, ...m, ...extra });
}
function failed(m) {
  return m.status !== 0;
}
function firstLine(s) {
  return (s || '').trim().split('\n').filter((l) => l.trim() !== '')[0] ?? '';
}

const csv = benchLog(ROWS, 'csv');
const jsonl = benchLog(ROWS, 'jsonl');
log(`${relative(ROOT, csv.file)}: ${(csv.bytes / MB).toFixed(1)} MB, ${csv.rows} rows`);

// The plain read, the peer and the CSV analysis are run in turn, round after round (measureInterleaved): this VM's
// speed drifts by several per cent over minutes and the peer's own times spread widely, so three runs of one and then
// three of the next gave ratios that moved with the minute they were taken in.
const analyzeArgs = (file, out) => [CLI, 'analyze', file, '--json', '--out', out];
const trio = [
  { cmd: NODE, args: ['scripts/bench/newlines.mjs', csv.file] },
  ...(PYTHON ? [{ cmd: PYTHON, args: [PEER, csv.file] }] : []),
  ...(CLI ? [{ cmd: NODE, args: analyzeArgs(csv.file, resolve(OUT, 'report-csv.json')) }] : []),
];
log(`plain read${PYTHON ? ', peer pandas script' : ''}${CLI ? ' and residuum analyze (CSV)' : ''}, in turn, ${RUNS} rounds ...`);
const measured = await measureInterleaved(trio, RUNS);
const plain = measured[0];
addRow('plain Node read of the file and a newline count', csv, plain);

let peer;
if (PYTHON) {
  peer = measured[1];
  if (failed(peer)) notes.push(`The peer script failed: ${firstLine(peer.stderr)}`);
  else addRow(`peer: \`${relative(ROOT, PEER)}\` (pandas)`, csv, peer);
}

let cliCsv, profile, afterParse, roundRatios;
if (CLI) {
  cliCsv = measured[measured.length - 1];
  if (failed(cliCsv)) {
    notes.push(`\`residuum analyze\` failed on the CSV log (exit ${cliCsv.status}): ${firstLine(cliCsv.stderr)}`);
    cliCsv = undefined;
  } else {
    addRow('`residuum analyze --json --out` (CSV)', csv, cliCsv, {
      ratios: [peer && !failed(peer) ? `${(cliCsv.wall_s / peer.wall_s).toFixed(2)} x peer` : '', `${(cliCsv.wall_s / plain.wall_s).toFixed(1)} x plain read`].filter(Boolean).join(', '),
    });
    if (peer && !failed(peer)) roundRatios = cliCsv.runs.map((r, k) => r.wall_s / peer.runs[k].wall_s);
    // The stage profile, RUNS times: the run with the median share of work after the parse is printed, and the
    // medians of the read and of what follows it (issue 3 asks the latter to be at most half the former).
    const profiles = [];
    for (let k = 0; k < RUNS; k++) {
      const p = await measureOnce(NODE, [...analyzeArgs(csv.file, resolve(OUT, 'report-csv.json')), '--profile']);
      const m = /profile:(.*)/.exec(p.stderr);
      if (!m) continue;
      const line = m[1].trim();
      const ms = (key) => Number((new RegExp(`(?:^|\\s)${key.replace('.', '\\.')}=([\\d.]+)ms`).exec(line) ?? [])[1]);
      profiles.push({ line, read: ms('read'), after: ms('total') - ms('read') });
    }
    if (profiles.length === 0) notes.push('The CLI printed no `profile:` line with --profile: no stage profile.');
    else {
      const median = (xs) => [...xs].sort((a, b) => a - b)[Math.floor((xs.length - 1) / 2)];
      const byShare = [...profiles].sort((a, b) => a.after / a.read - b.after / b.read);
      profile = byShare[Math.floor((byShare.length - 1) / 2)].line;
      afterParse = { read: median(profiles.map((p) => p.read)), after: median(profiles.map((p) => p.after)), runs: profiles };
    }
  }
  log('residuum analyze (JSON Lines) ...');
  const cliJsonl = await measure(NODE, analyzeArgs(jsonl.file, resolve(OUT, 'report-jsonl.json')), RUNS);
  if (failed(cliJsonl)) notes.push(`\`residuum analyze\` failed on the JSON Lines log (exit ${cliJsonl.status}): ${firstLine(cliJsonl.stderr)}`);
  else addRow('`residuum analyze --json --out` (JSON Lines, same log)', jsonl, cliJsonl, {
    ratios: cliCsv ? `${(cliJsonl.wall_s / cliCsv.wall_s).toFixed(2)} x CSV` : '',
  });
}

const cleanup = [];
if (!opt['no-big'] && CLI) {
  const big = benchLog(BIG_ROWS, 'csv');
  if (!opt.keep) cleanup.push(big.file);
  log(`residuum analyze (${BIG_ROWS} rows) ...`);
  const cliBig = await measure(NODE, analyzeArgs(big.file, resolve(OUT, 'report-big.json')), BIG_RUNS);
  if (failed(cliBig)) notes.push(`\`residuum analyze\` failed on the ${BIG_ROWS}-row log (exit ${cliBig.status}): ${firstLine(cliBig.stderr)}`);
  else addRow(`\`residuum analyze --json --out\` (CSV, ${BIG_ROWS / ROWS} x the rows)`, big, cliBig, {
    ratios: cliCsv ? `${(cliBig.wall_s / cliCsv.wall_s).toFixed(1)} x the ${ROWS}-row time (linear: ${(BIG_ROWS / ROWS).toFixed(0)})` : '',
  });
}

if (existsSync('extension/core/imu/allan.ts')) {
  log(`Allan deviation of ${ALLAN_N} samples ...`);
  try {
    const harness = await ensureBundle('scripts/bench/allan-harness.ts', 'bench-output/.tools/allan-harness.js', ['extension/core']);
    const allan = await measure(NODE, [harness, String(ALLAN_N)], RUNS, { keepStdout: true });
    if (failed(allan)) notes.push(`The Allan deviation harness failed: ${firstLine(allan.stderr)}`);
    else {
      const inner = allan.runs.map((r) => JSON.parse(r.stdout));
      const allan_s = inner.map((r) => r.allan_s).sort((a, b) => a - b)[Math.floor(inner.length / 2)];
      addRow(`Allan deviation (overlapping, octave taus) of ${ALLAN_N.toExponential(0)} samples, in process`, undefined,
        { ...allan, rows: ALLAN_N }, { ratios: `allanDeviation itself ${allan_s.toFixed(2)} s; ${inner[0].points} taus` });
    }
  } catch (e) {
    notes.push(`The Allan deviation harness does not build: ${String(e.message).split('\n')[0]}`);
  }
} else {
  notes.push('extension/core/imu/allan.ts does not exist yet: no Allan deviation row.');
}

if (opt.huge && CLI) {
  const hugeRows = Math.round((2e9 / csv.bytes) * csv.rows);
  const huge = benchLog(hugeRows, 'csv');
  if (!opt.keep) cleanup.push(huge.file);
  log(`residuum analyze (~2 GB, ${hugeRows} rows) ...`);
  const m = await measure(NODE, analyzeArgs(huge.file, resolve(OUT, 'report-huge.json')), 1);
  if (failed(m)) notes.push(`\`residuum analyze\` failed on the 2 GB log (exit ${m.status}): ${firstLine(m.stderr)}`);
  else {
    let partial = '';
    try { partial = JSON.parse(readFileSync(resolve(OUT, 'report-huge.json'), 'utf8')).partial ? ', report partial (decimated)' : ', report complete'; } catch { /* no report */ }
    addRow('`residuum analyze --json --out` (CSV, ~2 GB, memory-bound)', huge, m, { ratios: `peak / file size ${(m.peak_MiB * 1048576 / huge.bytes).toFixed(2)}${partial}` });
  }
}
for (const f of cleanup) try { unlinkSync(f); } catch { /* already gone */ }

// ---------------------------------------------------------------- report
const fmtInt = (x) => Math.round(x).toLocaleString('en-US');
const lines = [];
const cpu = (() => { try { return /model name\s*:\s*(.*)/.exec(readFileSync('/proc/cpuinfo', 'utf8'))[1]; } catch { return 'unknown CPU'; } })();
const cores = (() => { try { return readFileSync('/proc/cpuinfo', 'utf8').split('\n').filter((l) => l.startsWith('processor')).length; } catch { return '?'; } })();
lines.push(`Benchmark, ${new Date().toISOString().slice(0, 10)}: Node ${process.version}, ${cores} cores (${cpu}).`);
lines.push(`Log: the demo scene (\`extension/core/demo/warehouse.ts\`, bench column set: state at 100 Hz with ground truth, a 1-dof and a 3-dof channel), ` +
  `${fmtInt(csv.rows)} rows, ${(csv.bytes / MB).toFixed(1)} MB CSV. Wall time and peak memory of whole processes, median of ${RUNS} runs ` +
  `(${BIG_RUNS} for the big log; the plain read, the peer and the CSV analysis run in turn, round after round); peak memory by ${peakMethod()}.`);
lines.push('');
lines.push('| what | input | wall | rows/s | MB/s | peak | ratio |');
lines.push('| --- | --- | ---: | ---: | ---: | ---: | --- |');
for (const r of results) {
  const rowsPerS = r.rows ? fmtInt(r.rows / r.wall_s) : '';
  const mbps = r.bytes ? (r.bytes / MB / r.wall_s).toFixed(0) : '';
  const input = r.bytes ? `${(r.bytes / MB).toFixed(0)} MB, ${fmtInt(r.rows)} ${r.input.endsWith('.jsonl') ? 'records' : 'rows'}` : r.rows ? `${fmtInt(r.rows)} samples` : '';
  lines.push(`| ${r.what} | ${input} | ${r.wall_s.toFixed(2)} s | ${rowsPerS} | ${mbps} | ${r.peak_MiB.toFixed(0)} MiB | ${r.ratios ?? ''} |`);
}
for (const r of results.filter((x) => x.runs && x.runs.length > 1)) {
  lines.push('', `Runs of "${r.what}": ${r.runs.map((x) => `${x.wall_s.toFixed(2)} s`).join(', ')}.`);
}
if (roundRatios) {
  lines.push('', `\`analyze\` against the peer round by round (the two ran one after the other in each round): ` +
    `${roundRatios.map((x) => `${x.toFixed(2)} x`).join(', ')}; median ${median(roundRatios).toFixed(2)} x.`);
}
if (profile) {
  lines.push('');
  lines.push(`Stage profile of one \`analyze --profile\` run on the ${fmtInt(csv.rows)}-row CSV (the median of ${afterParse.runs.length} runs by the share below): ${profile.split(/\s+/).join(', ')}.`);
  lines.push('');
  lines.push(`Everything after parsing (total - read, main thread's clock): median ${afterParse.after.toFixed(0)} ms against a read of ` +
    `${afterParse.read.toFixed(0)} ms, ${(afterParse.after / afterParse.read).toFixed(2)} x the read (runs: ` +
    `${afterParse.runs.map((r) => `${r.after.toFixed(0)} / ${r.read.toFixed(0)} ms`).join(', ')}).`);
}
if (launcher) lines.push('', `Launcher (\`dist/cli.js\`, extension/cli/launch.ts) on this machine: ${launcher}.`);
if (csv.gen_s !== undefined) lines.push('', `Generating the ${fmtInt(csv.rows)}-row CSV took ${csv.gen_s.toFixed(1)} s (${fmtInt(csv.rows / csv.gen_s)} rows/s).`);
const loadEnd = loadavg()[0];
if (Math.max(loadStart, loadEnd) > cpus().length) {
  notes.push(`The machine was busy: load average ${loadStart.toFixed(1)} at the start and ${loadEnd.toFixed(1)} at the end on ${cpus().length} cores, so wall times are inflated; ratios measured in the same run are the figures to trust.`);
}
if (notes.length) {
  lines.push('');
  for (const n of notes) lines.push(`- ${n}`);
}
const md = lines.join('\n') + '\n';
writeFileSync(resolve(OUT, 'bench.md'), md);
writeFileSync(resolve(OUT, 'bench.json'), JSON.stringify({ results: results.map(({ runs, stdout, stderr, ...r }) => ({ ...r, runs_s: runs?.map((x) => x.wall_s) })), roundRatios, notes, profile }, null, 2) + '\n');
process.stdout.write(md);

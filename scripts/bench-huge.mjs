// `npm run bench -- --huge` (or `node scripts/bench-huge.mjs`): a generated log of about 2 GB analysed end to end by
// the command-line tool, twice: with the default memory budget (4096 MiB) and with a budget smaller than the log's
// columns (512 MiB, so the reader must decimate). Each run's peak resident memory (VmHWM from /proc, read by a
// preloaded exit hook) is printed against the bound the README states: peak RSS <= budget + 1 GiB of runtime,
// analysis working set and buffers. Not part of `npm test` (it writes 2 GB and takes minutes).
// usage: node scripts/bench-huge.mjs [--size-gb G] [--budgets MIB,MIB] [--keep]
// The log is an invented scene (a slow circle with a 1-D range channel), written to bench-output/huge.csv.
import { spawnSync } from 'node:child_process';
import { createWriteStream, existsSync, mkdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { once } from 'node:events';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
process.chdir(ROOT);
const args = process.argv.slice(2);
const opt = (name, dflt) => {
  const k = args.indexOf(name);
  return k >= 0 && k + 1 < args.length ? args[k + 1] : dflt;
};
const sizeBytes = Number(opt('--size-gb', '2')) * 1e9;
const budgets = opt('--budgets', '4096,512').split(',').map(Number);
/** The stated bound: peak resident memory at most the column budget plus this (runtime, analysis, I/O buffers). */
const OVERHEAD_MIB = 1024;

mkdirSync('bench-output/.tools', { recursive: true });
const logPath = resolve('bench-output/huge.csv');
const hook = resolve('bench-output/.tools/hwm-hook.cjs');
writeFileSync(hook, `process.on('exit', () => {
  try {
    const s = require('fs').readFileSync('/proc/self/status', 'utf8');
    const m = /VmHWM:\\s+(\\d+) kB/.exec(s);
    if (m) require('fs').writeFileSync(process.env.RESIDUUM_HWM_FILE, m[1]);
  } catch {}
});\n`);

if (!existsSync('dist/cli.js')) {
  const b = spawnSync(process.execPath, ['scripts/build.mjs'], { stdio: 'inherit' });
  if (b.status !== 0) process.exit(2);
}

/** Write the log: 100 Hz state (position, velocity, attitude, sigmas) and a range innovation on every 4th row. */
async function generate() {
  if (existsSync(logPath) && Math.abs(statSync(logPath).size - sizeBytes) < sizeBytes * 0.05) return;
  const out = createWriteStream(logPath);
  out.write('t,p_x,p_y,p_z,v_x,v_y,v_z,q_w,q_x,q_y,q_z,sigma_p_x,sigma_p_y,sigma_p_z,nu_range,S_range\n');
  let written = 0;
  let i = 0;
  let seed = 12345;
  const rnd = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648 - 0.5);
  while (written < sizeBytes) {
    const lines = [];
    for (let k = 0; k < 10000; k++, i++) {
      const t = i * 0.01;
      const a = 0.05 * t;
      const nu = i % 4 === 0 ? `${(0.1 * rnd()).toFixed(4)},0.0025` : ',';
      lines.push(`${t.toFixed(2)},${(10 * Math.cos(a)).toFixed(4)},${(10 * Math.sin(a)).toFixed(4)},1.2000,`
        + `${(-0.5 * Math.sin(a)).toFixed(4)},${(0.5 * Math.cos(a)).toFixed(4)},0,${Math.cos(a / 2).toFixed(6)},0,0,${Math.sin(a / 2).toFixed(6)},`
        + `0.05,0.05,0.08,${nu}\n`);
    }
    const chunk = lines.join('');
    written += chunk.length;
    if (!out.write(chunk)) await once(out, 'drain');
  }
  out.end();
  await once(out, 'finish');
}

const g0 = performance.now();
await generate();
const size = statSync(logPath).size;
process.stdout.write(`huge log: ${logPath}, ${(size / 1e9).toFixed(2)} GB (generated or reused in ${((performance.now() - g0) / 1000).toFixed(0)} s)\n`);

const rows = [];
let failed = false;
for (const budget of budgets) {
  const hwmFile = resolve(`bench-output/.tools/hwm-${budget}.txt`);
  rmSync(hwmFile, { force: true });
  const reportPath = resolve(`bench-output/huge-report-${budget}.json`);
  const t0 = performance.now();
  const r = spawnSync(process.execPath, ['-r', hook, 'dist/cli.js', 'analyze', logPath, '--memory-budget', String(budget), '--out', reportPath],
    { encoding: 'utf8', env: { ...process.env, RESIDUUM_HWM_FILE: hwmFile }, maxBuffer: 1 << 26 });
  const seconds = (performance.now() - t0) / 1000;
  const peakMiB = existsSync(hwmFile) ? Number(readFileSync(hwmFile, 'utf8')) / 1024 : NaN;
  const bound = budget + OVERHEAD_MIB;
  let report;
  try { report = JSON.parse(readFileSync(reportPath, 'utf8')); } catch { report = undefined; }
  const ok = r.status === 0 && report !== undefined && peakMiB <= bound;
  if (!ok) failed = true;
  rows.push({ budget, seconds, peakMiB, bound, ok, status: r.status, signal: r.signal, report, stderr: (r.stderr || '').trim().split('\n')[0] });
}

process.stdout.write('\n| budget (MiB) | exit | time (s) | records read | state epochs kept | partial | peak RSS (MiB) | bound (MiB) | within |\n');
process.stdout.write('|---:|---:|---:|---:|---:|---|---:|---:|---|\n');
for (const x of rows) {
  process.stdout.write(`| ${x.budget} | ${x.status ?? x.signal} | ${x.seconds.toFixed(0)} | ${x.report?.source.rows ?? '-'} | ${x.report?.time.epochs ?? '-'} | `
    + `${x.report ? (x.report.partial ? 'yes' : 'no') : '-'} | ${x.peakMiB.toFixed(0)} | ${x.bound} | ${x.ok ? 'yes' : 'NO'} |\n`);
  const note = x.report?.findings.find((f) => /memory budget/.test(f.message));
  if (note) process.stdout.write(`  ${x.budget} MiB: ${note.message}\n`);
  if (x.status !== 0) process.stdout.write(`  ${x.budget} MiB: ${x.stderr}\n`);
}
process.stdout.write(`\nmachine: ${(await import('node:os')).cpus().length} cores, ${((await import('node:os')).totalmem() / 2 ** 30).toFixed(0)} GiB, node ${process.version}\n`);
if (!args.includes('--keep')) rmSync(logPath, { force: true });
process.exitCode = failed ? 1 : 0;

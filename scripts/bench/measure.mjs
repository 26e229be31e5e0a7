// Runs a command as a separate process and measures its wall time and peak resident memory: from /usr/bin/time -v
// when present (exact: the kernel's maximum RSS of the child), otherwise by polling /proc/<pid>/status VmHWM.
import { spawn } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';

const GNU_TIME = existsSync('/usr/bin/time') ? '/usr/bin/time' : undefined;

/** How peak memory is measured on this machine (for the report). */
export function peakMethod() {
  return GNU_TIME ? '/usr/bin/time -v (maximum resident set size)' : '/proc/<pid>/status VmHWM, polled every 20 ms';
}

/**
 * Run `cmd args` once. Resolves { wall_s, peak_MiB, status, stdout, stderr }; stdout is kept only when keepStdout.
 */
export function measureOnce(cmd, args, { keepStdout = false, cwd } = {}) {
  return new Promise((resolve) => {
    const argv = GNU_TIME ? ['-v', cmd, ...args] : args;
    const exe = GNU_TIME ?? cmd;
    const t0 = performance.now();
    const child = spawn(exe, argv, { cwd, stdio: ['ignore', keepStdout ? 'pipe' : 'ignore', 'pipe'] });
    let stdout = '';
    let stderr = '';
    let hwm_kB = 0;
    if (keepStdout) child.stdout.on('data', (d) => { stdout += d; });
    child.stderr.on('data', (d) => { stderr += d; });
    const poll = GNU_TIME ? undefined : setInterval(() => {
      try {
        const m = /VmHWM:\s+(\d+)/.exec(readFileSync(`/proc/${child.pid}/status`, 'utf8'));
        if (m) hwm_kB = Math.max(hwm_kB, Number(m[1]));
      } catch { /* the process has ended */ }
    }, 20);
    child.on('close', (status) => {
      const wall_s = (performance.now() - t0) / 1000;
      if (poll) clearInterval(poll);
      let own = stderr;
      if (GNU_TIME) {
        const m = /Maximum resident set size \(kbytes\): (\d+)/.exec(stderr);
        if (m) hwm_kB = Number(m[1]);
        const cut = stderr.indexOf('\tCommand being timed:');
        own = cut >= 0 ? stderr.slice(0, cut) : stderr;
        const st = /Exit status: (\d+)/.exec(stderr);
        if (st) status = Number(st[1]);
      }
      resolve({ wall_s, peak_MiB: hwm_kB / 1024, status, stdout, stderr: own });
    });
  });
}

/** Median of numbers. */
export function median(xs) {
  const s = [...xs].sort((a, b) => a - b);
  const n = s.length;
  return n === 0 ? NaN : n % 2 ? s[(n - 1) / 2] : (s[n / 2 - 1] + s[n / 2]) / 2;
}

/** Run `runs` times; resolves { wall_s, peak_MiB (medians), runs: [...], status (first non-zero, else 0), stderr }. */
export async function measure(cmd, args, runs = 3, opts = {}) {
  const all = [];
  for (let i = 0; i < runs; i++) all.push(await measureOnce(cmd, args, opts));
  return summary(all);
}

/** The medians of several runs of one command, the runs, the first non-zero status, and that run's stderr. */
function summary(all) {
  const bad = all.find((r) => r.status !== 0);
  return {
    wall_s: median(all.map((r) => r.wall_s)),
    peak_MiB: median(all.map((r) => r.peak_MiB)),
    runs: all,
    status: bad ? bad.status : 0,
    stderr: (bad ?? all[all.length - 1]).stderr,
    stdout: all[all.length - 1].stdout,
  };
}

/**
 * Run several commands in turn, `runs` rounds (A B C, A B C, ...), so that a machine whose speed drifts over minutes
 * slows or speeds them alike: their ratios are then fairer than those of commands measured one after the other.
 * `cmds`: [{ cmd, args, opts }]. Resolves one result per command, as {@link measure} gives.
 */
export async function measureInterleaved(cmds, runs = 3) {
  const all = cmds.map(() => []);
  for (let r = 0; r < runs; r++) {
    for (let i = 0; i < cmds.length; i++) all[i].push(await measureOnce(cmds[i].cmd, cmds[i].args, cmds[i].opts ?? {}));
  }
  return all.map(summary);
}

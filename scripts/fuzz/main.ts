/**
 * Entry of `npm run fuzz` (bundled by scripts/fuzz.mjs): the seeded reader properties, then the linear-growth check.
 * usage: node fuzz.js [--runs N=100000] [--seed S=20261202] [--minutes-per-target M=10]
 * Counterexamples are reported as found (no shrinking: one pathologically slow input must not stall the run).
 *        node fuzz.js --growth-case KIND SCALE     (internal: one growth measurement in a fresh process)
 */
import { parseArgs } from 'node:util';
import { writeFileSync, mkdirSync } from 'node:fs';
import { runFuzz, setCaseRecorder } from './properties';
import { growthCase } from './growth';

async function main(): Promise<number> {
  const { values, positionals } = parseArgs({
    allowPositionals: true,
    options: {
      runs: { type: 'string', default: '100000' }, seed: { type: 'string', default: '20261202' },
      'growth-case': { type: 'boolean' }, 'minutes-per-target': { type: 'string', default: '10' },
    },
  });
  if (values['growth-case']) {
    const r = await growthCase(positionals[0], Number(positionals[1]));
    process.stdout.write(JSON.stringify(r) + '\n');
    return 0;
  }
  // Each case is written to disk before it is read, so a fatal crash of the reader (which no property can catch)
  // leaves the input behind; reads slower than 1 s on inputs under 64 KiB are listed as pathological.
  mkdirSync('bench-output', { recursive: true });
  const slow: string[] = [];
  let cases = 0;
  setCaseRecorder({
    before(name, bytes, mapText) {
      writeFileSync('bench-output/fuzz-last-case.bin', bytes);
      writeFileSync('bench-output/fuzz-last-case.json', JSON.stringify({ name, mapText }) + '\n');
    },
    after(name, bytes, seconds) {
      cases++;
      if (seconds > 1 && bytes.length < 65536 && slow.length < 20) {
        const file = `bench-output/fuzz-slow-${slow.length}.bin`;
        writeFileSync(file, bytes);
        slow.push(`${name}: ${bytes.length} bytes read in ${seconds.toFixed(1)} s (saved as ${file})`);
      }
    },
  });
  const total = Number(values.runs);
  const seed = Number(values.seed);
  process.stdout.write(`fuzzing the readers: ${total} cases, seed ${seed}\n`);
  const timeLimit_ms = Number(values['minutes-per-target']) * 60_000;
  const { runs, failures } = await runFuzz(total, seed, (name, n, s, failure, interrupted) => {
    process.stdout.write(`  ${failure ? 'FAIL' : 'ok  '} ${name.padEnd(28)} ${String(n).padStart(7)} cases  ${s.toFixed(1)} s${interrupted ? '  (stopped by the time limit)' : ''}\n`);
  }, undefined, { shrink: false, timeLimit_ms });
  process.stdout.write(`${runs} cases run, ${failures.length} failing propert${failures.length === 1 ? 'y' : 'ies'}\n`);
  for (const f of failures) process.stdout.write(`\n${f}\n`);
  process.stdout.write(`${cases} reads; ${slow.length} pathological (over 1 s for under 64 KiB)\n`);
  for (const s of slow) process.stdout.write(`  SLOW ${s}\n`);
  return failures.length > 0 || slow.length > 0 ? 1 : 0;
}

main().then((code) => { process.exitCode = code; }, (e: unknown) => {
  process.stderr.write(`fuzz: ${e instanceof Error ? e.stack : String(e)}\n`);
  process.exitCode = 2;
});

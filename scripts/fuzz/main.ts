/**
 * Entry of `npm run fuzz` (bundled by scripts/fuzz.mjs): the seeded reader properties, then the linear-growth check.
 * usage: node fuzz.js [--runs N=100000] [--seed S=20261202] [--growth-only] [--no-growth]
 *        node fuzz.js --growth-case KIND SCALE     (internal: one growth measurement in a fresh process)
 */
import { parseArgs } from 'node:util';
import { runFuzz } from './properties';
import { growthCase } from './growth';

async function main(): Promise<number> {
  const { values, positionals } = parseArgs({
    allowPositionals: true,
    options: {
      runs: { type: 'string', default: '100000' }, seed: { type: 'string', default: '20261202' },
      'growth-case': { type: 'boolean' },
    },
  });
  if (values['growth-case']) {
    const r = await growthCase(positionals[0], Number(positionals[1]));
    process.stdout.write(JSON.stringify(r) + '\n');
    return 0;
  }
  const total = Number(values.runs);
  const seed = Number(values.seed);
  process.stdout.write(`fuzzing the readers: ${total} cases, seed ${seed}\n`);
  const { runs, failures } = await runFuzz(total, seed, (name, n, s, failure) => {
    process.stdout.write(`  ${failure ? 'FAIL' : 'ok  '} ${name.padEnd(28)} ${String(n).padStart(7)} cases  ${s.toFixed(1)} s\n`);
  });
  process.stdout.write(`${runs} cases run, ${failures.length} failing propert${failures.length === 1 ? 'y' : 'ies'}\n`);
  for (const f of failures) process.stdout.write(`\n${f}\n`);
  return failures.length > 0 ? 1 : 0;
}

main().then((code) => { process.exitCode = code; }, (e: unknown) => {
  process.stderr.write(`fuzz: ${e instanceof Error ? e.stack : String(e)}\n`);
  process.exitCode = 2;
});

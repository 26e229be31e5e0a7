// `npm run fuzz`: seeded fast-check properties over the readers (CSV, JSON Lines, JSON, mapping, anchors, notes
// sidecar; scripts/fuzz/properties.ts), at least 100,000 cases, then a linear-growth check: each input kind read
// at 1x and 10x size in fresh processes, time and peak-memory ratios printed and loosely asserted (time ratio under
// 20, memory ratio under 12; linear is 10 and memory includes the runtime's fixed share).
// usage: node scripts/fuzz.mjs [--runs N] [--seed S] [--minutes-per-target M] [--no-growth] [--growth-only]
import { spawnSync } from 'node:child_process';
import { dirname, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { ensureBundle } from './bench/bundle.mjs';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
process.chdir(ROOT);
const args = process.argv.slice(2);
const harness = await ensureBundle('scripts/fuzz/main.ts', 'bench-output/.tools/fuzz.js', ['extension/core', 'scripts/fuzz']);

let status = 0;
if (!args.includes('--growth-only')) {
  const r = spawnSync(process.execPath, [harness, ...args.filter((a) => !a.startsWith('--growth') && a !== '--no-growth')], { stdio: 'inherit' });
  status = r.status ?? 2;
  if (r.status !== 0 && r.status !== 1) {
    process.stdout.write(`\nThe fuzz process died (${r.signal ?? `exit ${r.status}`}): a fatal error no property can catch. ` +
      'The input being read is in bench-output/fuzz-last-case.bin (its name and mapping text in fuzz-last-case.json).\n');
  }
}

if (!args.includes('--no-growth')) {
  process.stdout.write('\nlinear growth (fresh process per measurement; read time and peak RSS):\n');
  const kinds = ['csv', 'jsonl', 'long-line', 'quoted', 'ragged'];
  for (const kind of kinds) {
    const m = [1, 10].map((scale) => {
      const r = spawnSync(process.execPath, [harness, '--growth-case', kind, String(scale)], { encoding: 'utf8' });
      if (r.status !== 0) return { error: (r.stderr || r.stdout).trim().split('\n')[0] };
      return JSON.parse(r.stdout);
    });
    if (m.some((x) => x.error)) {
      process.stdout.write(`  FAIL ${kind}: ${m.map((x) => x.error).filter(Boolean).join('; ')}\n`);
      status = status || 1;
      continue;
    }
    const [a, b] = m;
    const timeRatio = b.read_s / a.read_s;
    const memRatio = b.peak_MiB / a.peak_MiB;
    const ok = timeRatio < 20 && memRatio < 12;
    if (!ok) status = status || 1;
    process.stdout.write(`  ${ok ? 'ok  ' : 'FAIL'} ${kind.padEnd(10)} ${(a.bytes / 1e6).toFixed(1)} MB -> ${(b.bytes / 1e6).toFixed(1)} MB: ` +
      `read ${a.read_s.toFixed(2)} s -> ${b.read_s.toFixed(2)} s (x${timeRatio.toFixed(1)}), ` +
      `peak ${a.peak_MiB.toFixed(0)} -> ${b.peak_MiB.toFixed(0)} MiB (x${memRatio.toFixed(1)})\n`);
  }
}
process.exitCode = status;

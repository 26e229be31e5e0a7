// `npm run gen-demo [-- options]`: (re)builds dist/gen-demo.js from scripts/gen-demo.ts when stale, then runs it.
// Without options it rewrites the shipped demo (demo/warehouse-flight.csv, demo/anchors.csv); see scripts/gen-demo.ts.
import { spawnSync } from 'node:child_process';
import { ensureBundle } from './bench/bundle.mjs';

const out = await ensureBundle('scripts/gen-demo.ts', 'dist/gen-demo.js', ['extension/core']);
const r = spawnSync(process.execPath, [out, ...process.argv.slice(2)], { stdio: 'inherit' });
process.exitCode = r.status ?? 1;

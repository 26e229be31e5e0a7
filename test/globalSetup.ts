/**
 * Builds `dist/` once before the tests, so the tests that start the CLI or the analysis worker from `dist/` never run
 * an older build than the sources they sit beside (esbuild; a few seconds).
 */
import { execFileSync } from 'node:child_process';
import path from 'node:path';

/** Vitest global setup: `node scripts/build.mjs`. */
export default function setup(): void {
  const root = path.resolve(__dirname, '..');
  execFileSync(process.execPath, [path.join(root, 'scripts/build.mjs')], { cwd: root, stdio: 'inherit' });
}

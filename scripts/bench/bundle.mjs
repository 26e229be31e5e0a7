// Bundles a TypeScript entry with esbuild when its output is missing or older than its sources, so the scripts
// (gen-demo, bench, fuzz) run from a fresh checkout without a full build and never on stale code.
import * as esbuild from 'esbuild';
import { existsSync, statSync, readdirSync } from 'node:fs';
import { join } from 'node:path';

/**
 * Module aliases shared with scripts/build.mjs: jsonc-parser's `main` is a UMD build whose lazy requires esbuild
 * cannot follow, so its ESM build is bundled.
 */
export const ALIAS = { 'jsonc-parser': './node_modules/jsonc-parser/lib/esm/main.js', debug: './scripts/shims/debug.cjs' }; // as scripts/build.mjs

/** Newest modification time (ms) of the .ts files under the given files or folders. */
export function newestSource(paths) {
  let newest = 0;
  const visit = (p) => {
    if (!existsSync(p)) return;
    const st = statSync(p);
    if (st.isDirectory()) {
      for (const e of readdirSync(p)) visit(join(p, e));
    } else if (p.endsWith('.ts')) {
      newest = Math.max(newest, st.mtimeMs);
    }
  };
  for (const p of paths) visit(p);
  return newest;
}

/**
 * Build `entry` to `outfile` (node, cjs) unless `outfile` is newer than every .ts file under `watch`.
 * Returns the output path.
 */
export async function ensureBundle(entry, outfile, watch) {
  if (existsSync(outfile) && statSync(outfile).mtimeMs >= newestSource([entry, ...watch])) return outfile;
  await esbuild.build({
    entryPoints: [entry], outfile, bundle: true, platform: 'node', format: 'cjs', target: 'node20',
    sourcemap: true, logLevel: 'warning', legalComments: 'none', alias: ALIAS,
  });
  return outfile;
}

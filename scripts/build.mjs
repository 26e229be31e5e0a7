// Builds every artifact with esbuild from one list (type checking is `npm run check-types`, separately).
// Usage: node scripts/build.mjs [--production] [--watch]
import * as esbuild from 'esbuild';
import { existsSync, mkdirSync, copyFileSync, chmodSync } from 'node:fs';

const production = process.argv.includes('--production');
const watch = process.argv.includes('--watch');

// jsonc-parser's `main` is a UMD build whose lazy require('./impl/...') calls esbuild cannot follow: bundle its ESM build.
// `debug` (a logger of @stdlib's gammaincinv) is replaced by a no-op shim: see scripts/shims/debug.cjs.
const alias = { 'jsonc-parser': './node_modules/jsonc-parser/lib/esm/main.js', debug: './scripts/shims/debug.cjs' };
const common = { bundle: true, sourcemap: !production, minify: production, logLevel: 'warning', legalComments: 'none', alias };

/** Every artifact: entry, output, platform. */
const artifacts = [
  { entryPoints: ['extension/host/extension.ts'], outfile: 'dist/extension.js', platform: 'node', format: 'cjs', target: 'node20', external: ['vscode'] },
  { entryPoints: ['extension/host/analysisWorker.ts'], outfile: 'dist/analysisWorker.js', platform: 'node', format: 'cjs', target: 'node20', external: ['vscode'] },
  // dist/cli.js is the small launcher (extension/cli/launch.ts) that starts dist/cliMain.js, the tool itself.
  { entryPoints: ['extension/cli/launch.ts'], outfile: 'dist/cli.js', platform: 'node', format: 'cjs', target: 'node20', banner: { js: '#!/usr/bin/env node' } },
  { entryPoints: ['extension/cli/main.ts'], outfile: 'dist/cliMain.js', platform: 'node', format: 'cjs', target: 'node20' },
  // The CLI's stage worker (hash of the log, errors stage beside the main thread): only the code it needs, so it loads fast.
  { entryPoints: ['extension/node/stageWorker.ts'], outfile: 'dist/stageWorker.js', platform: 'node', format: 'cjs', target: 'node20' },
  { entryPoints: ['webview/main.ts'], outfile: 'dist/webview.js', platform: 'browser', format: 'iife', target: 'es2022' },
  { entryPoints: ['scripts/gen-demo.ts'], outfile: 'dist/gen-demo.js', platform: 'node', format: 'cjs', target: 'node20' },
].filter((a) => existsSync(a.entryPoints[0]));

mkdirSync('dist', { recursive: true });
if (existsSync('node_modules/uplot/dist/uPlot.min.css')) copyFileSync('node_modules/uplot/dist/uPlot.min.css', 'dist/uPlot.min.css');
if (existsSync('webview/style.css')) copyFileSync('webview/style.css', 'dist/webview.css');

if (watch) {
  for (const a of artifacts) {
    const ctx = await esbuild.context({ ...common, ...a });
    await ctx.watch();
  }
} else {
  await Promise.all(artifacts.map((a) => esbuild.build({ ...common, ...a })));
  if (existsSync('dist/cli.js')) chmodSync('dist/cli.js', 0o755);
}

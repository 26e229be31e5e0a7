#!/usr/bin/env node
// `npm start`: Residuum in a real VS Code in the browser, on the demo workspace, with the demo log's analysis open.
//   1. builds dist/ and packages .tools/residuum.vsix (vsce, no dependencies);
//   2. installs code-server 4.100.3 into .tools/ when missing (scripts/tools.mjs, about 3 minutes the first time);
//   3. installs the extension into a fresh .tools/ext and seeds user settings (no start page, telemetry off,
//      no update checks) in .tools/start/user-data;
//   4. starts code-server on 127.0.0.1 (a free port unless --port), `--auth none`, on demo/workspace, with
//      RESIDUUM_OPEN_ON_START pointing at the demo log so the extension opens its analysis (extension/host/selfTest.ts);
//   5. prints the URL. Ctrl-C stops it.
// Options: --port N, --log FILE (open this log instead of the demo log), --workspace DIR, --no-build (reuse the
// last .vsix), --open (also launch the system browser with xdg-open when a display is present).
// The analysis opens once a browser connects: code-server starts the extension host for the first window.
import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import path from 'node:path';
import {
  ROOT,
  TOOLS_DIR,
  buildAndPackage,
  createProfile,
  ensureTools,
  installExtension,
  startCodeServer,
} from './e2e/harness.mjs';

function arg(name) {
  const i = process.argv.indexOf(name);
  return i >= 0 ? process.argv[i + 1] : undefined;
}
const flag = (name) => process.argv.includes(name);

function say(msg) {
  process.stdout.write(`[start] ${msg}\n`);
}

function fail(msg) {
  process.stderr.write(`[start] ${msg}\n`);
  process.exit(1);
}

async function main() {
  const workspace = path.resolve(arg('--workspace') ?? path.join(ROOT, 'demo', 'workspace'));
  if (!existsSync(workspace)) fail(`the workspace ${workspace} does not exist (the demo workspace is demo/workspace)`);
  const inWorkspace = path.join(workspace, 'warehouse-flight.csv');
  const demoLog = arg('--log') ? path.resolve(arg('--log')) : existsSync(inWorkspace) ? inWorkspace : path.join(ROOT, 'demo', 'warehouse-flight.csv');
  if (!existsSync(demoLog)) fail(`the log ${demoLog} does not exist`);
  const portArg = arg('--port');
  const port = portArg === undefined ? 0 : Number(portArg);
  if (!Number.isInteger(port) || port < 0 || port > 65535) fail(`--port ${portArg}: expected an integer 0..65535`);

  say('installing tools if needed (code-server 4.100.3 into .tools/)');
  let tools;
  try {
    tools = ensureTools();
  } catch (e) {
    fail(`cannot install the tools: ${e instanceof Error ? e.message : String(e)}`);
  }

  const vsix = path.join(TOOLS_DIR, 'residuum.vsix');
  if (flag('--no-build') && existsSync(vsix)) {
    say(`reusing ${path.relative(ROOT, vsix)}`);
  } else {
    say('building and packaging the extension');
    try {
      const p = buildAndPackage(vsix);
      say(`packaged ${path.relative(ROOT, p.vsix)} (${(p.bytes / 1024).toFixed(0)} KiB)`);
    } catch (e) {
      fail(e instanceof Error ? e.message : String(e));
    }
  }

  const profile = createProfile(path.join(TOOLS_DIR, 'start'));
  // The extensions dir is .tools/ext, fresh each start, so an old build never lingers.
  profile.extensions = path.join(TOOLS_DIR, 'ext');
  const { rmSync, mkdirSync } = await import('node:fs');
  rmSync(profile.extensions, { recursive: true, force: true });
  mkdirSync(profile.extensions, { recursive: true });
  installExtension(tools.codeServerBin, profile, vsix);
  say(`installed the extension into ${path.relative(ROOT, profile.extensions)}`);

  const cs = await startCodeServer({
    codeServerBin: tools.codeServerBin,
    profile,
    workspace,
    port,
    env: { RESIDUUM_OPEN_ON_START: demoLog },
    onLog: (line) => {
      if (/error/i.test(line) && !/vsda/.test(line)) process.stderr.write(`[code-server] ${line}\n`);
    },
  });
  const stop = async () => {
    say('stopping code-server');
    await cs.stop();
    process.exit(0);
  };
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
  cs.child.once('exit', (code) => {
    say(`code-server exited (code ${code})`);
    process.exit(code ?? 0);
  });

  say(`Residuum is running in VS Code at:\n\n    ${cs.workbenchUrl}\n`);
  say(`the analysis of ${path.relative(ROOT, demoLog)} opens when the page connects; Ctrl-C stops`);
  if (flag('--open') && process.env.DISPLAY) {
    spawn('xdg-open', [cs.workbenchUrl], { stdio: 'ignore', detached: true }).on('error', () => undefined).unref();
  }
}

main().catch((e) => fail(e instanceof Error ? e.stack ?? e.message : String(e)));

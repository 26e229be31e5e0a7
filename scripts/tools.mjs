#!/usr/bin/env node
// Installs the git-ignored tools used to test Residuum in a real VS Code:
//   .tools/code-server/  code-server 4.100.3 (VS Code 1.100.3 server + web build) with its own package.json,
//                        so the extension's own lockfile never sees it.
//   /usr/bin/chromium    Debian's chromium, driven headless by playwright-core (checked, installed via apt when root).
// Idempotent: a stamp file records a finished install; when the stamp is present and `code-server --version`
// answers, nothing is done. Usage: node scripts/tools.mjs [--force] [--check]
// Exit codes: 0 ready, 1 cannot install (the message says what is missing and how to fix it).
//
// Offline workarounds (recipe in ../shared/vscode-conventions.md section 5(c)):
//   1. code-server's postinstall refuses to run as root unless npm_config_unsafe_perm=true.
//   2. node-pty's postinstall runs `npx node-gyp`, which waits for a TTY unless npm_config_yes=true.
//   3. kerberos needs libkrb5-dev; @vscode/ripgrep's postinstall downloads from GitHub, so its cache is
//      pre-seeded with Debian's `rg` (version strings from 4.100.3's lib/vscode/npm-shrinkwrap.json).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, writeFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

/** code-server release pinned for Node 20 (4.103.2+ declare engines.node 22). */
export const CODE_SERVER_VERSION = '4.100.3';
/** @vscode/ripgrep cache folder and binary release used by code-server 4.100.3. */
const RIPGREP_CACHE_DIR = 'vscode-ripgrep-cache-1.15.11';
const RIPGREP_RELEASE = 'v13.0.0-10';
/** Debian packages needed to build code-server's native modules and to drive the browser. */
export const APT_PACKAGES = ['build-essential', 'python3', 'pkg-config', 'libkrb5-dev', 'ripgrep', 'chromium'];

/** Project root (the folder holding package.json). */
export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
/** Tools folder (git-ignored). */
export const TOOLS_DIR = path.join(ROOT, '.tools');
/** Where code-server is installed, with its own package.json. */
export const CODE_SERVER_DIR = path.join(TOOLS_DIR, 'code-server');
/** The code-server launcher inside CODE_SERVER_DIR. */
export const CODE_SERVER_BIN = path.join(CODE_SERVER_DIR, 'node_modules', '.bin', 'code-server');
const STAMP = path.join(CODE_SERVER_DIR, `.installed-${CODE_SERVER_VERSION}`);

/** Candidate paths of a Chromium-family browser; Debian's chromium first. */
const CHROMIUM_CANDIDATES = ['/usr/bin/chromium', '/usr/bin/chromium-browser', '/usr/bin/google-chrome'];

function log(msg) {
  process.stderr.write(`[tools] ${msg}\n`);
}

/** Returns the path of the system Chromium (env RESIDUUM_CHROMIUM overrides), or undefined when none is installed. */
export function findChromium() {
  const fromEnv = process.env.RESIDUUM_CHROMIUM;
  if (fromEnv && existsSync(fromEnv)) return fromEnv;
  return CHROMIUM_CANDIDATES.find((p) => existsSync(p));
}

function codeServerAnswers() {
  if (!existsSync(CODE_SERVER_BIN)) return undefined;
  // Pass --config: without it the first run writes ~/.config/code-server/config.yaml (and says so on stdout).
  const config = path.join(TOOLS_DIR, 'code-server-version.yaml');
  if (!existsSync(config)) writeFileSync(config, 'auth: none\ncert: false\n');
  const r = spawnSync(CODE_SERVER_BIN, ['--config', config, '--version'], { encoding: 'utf8', timeout: 60_000 });
  if (r.status !== 0) return undefined;
  const line = (r.stdout || '').split('\n').find((l) => l.startsWith(`${CODE_SERVER_VERSION} `));
  return line?.trim();
}

function missingDebianPackages(pkgs) {
  if (!existsSync('/usr/bin/dpkg-query')) return [];
  return pkgs.filter((p) => {
    const r = spawnSync('dpkg-query', ['-W', '-f=${Status}', p], { encoding: 'utf8' });
    return r.status !== 0 || !r.stdout.includes('install ok installed');
  });
}

function ensureDebianPackages() {
  const missing = missingDebianPackages(APT_PACKAGES);
  if (missing.length === 0) return;
  const isRoot = typeof process.getuid === 'function' && process.getuid() === 0;
  if (!isRoot || !existsSync('/usr/bin/apt-get')) {
    throw new Error(
      `missing Debian packages: ${missing.join(' ')}. Install them with: sudo apt-get install -y ${missing.join(' ')}`,
    );
  }
  log(`apt-get install -y ${missing.join(' ')}`);
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  const upd = spawnSync('apt-get', ['update'], { stdio: 'inherit', env });
  if (upd.status !== 0) throw new Error('apt-get update failed (see output above)');
  const inst = spawnSync('apt-get', ['install', '-y', ...missing], { stdio: 'inherit', env });
  if (inst.status !== 0) throw new Error(`apt-get install -y ${missing.join(' ')} failed (see output above)`);
}

function ripgrepTarget() {
  const arch = { x64: 'x86_64', arm64: 'aarch64' }[process.arch];
  if (!arch) throw new Error(`no pre-seeded ripgrep for architecture ${process.arch}`);
  return `ripgrep-${RIPGREP_RELEASE}-${arch}-unknown-linux-musl.tar.gz`;
}

function preseedRipgrepCache() {
  const rg = spawnSync('sh', ['-c', 'command -v rg'], { encoding: 'utf8' }).stdout.trim();
  if (!rg) throw new Error('`rg` (Debian package ripgrep) is not on PATH; install it: apt-get install -y ripgrep');
  const dir = path.join(os.tmpdir(), RIPGREP_CACHE_DIR);
  mkdirSync(dir, { recursive: true });
  const tarball = path.join(dir, ripgrepTarget());
  if (existsSync(tarball)) return;
  const r = spawnSync('tar', ['czf', tarball, '-C', path.dirname(rg), path.basename(rg)], { stdio: 'inherit' });
  if (r.status !== 0) throw new Error(`could not create ${tarball} from ${rg}`);
  log(`pre-seeded ${tarball} from ${rg}`);
}

function installCodeServer() {
  mkdirSync(CODE_SERVER_DIR, { recursive: true });
  rmSync(STAMP, { force: true });
  writeFileSync(
    path.join(CODE_SERVER_DIR, 'package.json'),
    JSON.stringify(
      {
        name: 'residuum-test-tools',
        private: true,
        description: 'code-server for Residuum end-to-end tests (installed by scripts/tools.mjs; git-ignored)',
        dependencies: { 'code-server': CODE_SERVER_VERSION },
      },
      null,
      2,
    ) + '\n',
  );
  log(`npm install code-server@${CODE_SERVER_VERSION} in ${path.relative(ROOT, CODE_SERVER_DIR)} (about 3 minutes on 2 cores)`);
  const env = {
    ...process.env,
    npm_config_unsafe_perm: 'true',
    npm_config_yes: 'true',
    npm_config_audit: 'false',
    npm_config_fund: 'false',
    npm_config_update_notifier: 'false',
  };
  const r = spawnSync('npm', ['install', '--no-audit', '--no-fund', '--loglevel=error'], {
    cwd: CODE_SERVER_DIR,
    stdio: ['ignore', 'inherit', 'inherit'],
    env,
  });
  if (r.status !== 0) {
    throw new Error(
      `npm install code-server@${CODE_SERVER_VERSION} failed (exit ${r.status}). Needs the npm registry, ` +
        `Debian packages ${APT_PACKAGES.join(' ')}, and write access to ${CODE_SERVER_DIR}.`,
    );
  }
}

/**
 * Makes sure code-server and Chromium are ready, installing what is missing.
 * Returns the paths the harness needs; throws an Error with a clear message when it cannot.
 * @param {{force?: boolean}} [opts]
 * @returns {{codeServerBin: string, chromium: string, version: string}}
 */
export function ensureTools(opts = {}) {
  let version = !opts.force && existsSync(STAMP) ? codeServerAnswers() : undefined;
  if (!version) {
    ensureDebianPackages();
    preseedRipgrepCache();
    installCodeServer();
    version = codeServerAnswers();
    if (!version) throw new Error(`code-server was installed in ${CODE_SERVER_DIR} but \`code-server --version\` does not answer ${CODE_SERVER_VERSION}`);
    writeFileSync(STAMP, `${version}\n${new Date().toISOString()}\n`);
    log(`code-server ready: ${version}`);
  }
  const chromium = findChromium();
  if (!chromium) {
    ensureDebianPackages();
  }
  const chromiumAfter = findChromium();
  if (!chromiumAfter) throw new Error(`no Chromium found at ${CHROMIUM_CANDIDATES.join(', ')}; install it: apt-get install -y chromium`);
  return { codeServerBin: CODE_SERVER_BIN, chromium: chromiumAfter, version };
}

/** True when tools are already installed (stamp present and binaries answer); never installs. */
export function toolsReady() {
  return existsSync(STAMP) && codeServerAnswers() !== undefined && findChromium() !== undefined;
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  const t0 = Date.now();
  try {
    if (process.argv.includes('--check')) {
      const ok = toolsReady();
      log(ok ? 'tools ready' : 'tools missing: run node scripts/tools.mjs');
      process.exit(ok ? 0 : 1);
    }
    const t = ensureTools({ force: process.argv.includes('--force') });
    log(`ok: code-server ${t.version.split(' ')[0]} at ${path.relative(ROOT, t.codeServerBin)}, chromium at ${t.chromium} (${((Date.now() - t0) / 1000).toFixed(1)} s)`);
  } catch (e) {
    log(`FAILED: ${e instanceof Error ? e.message : String(e)}`);
    process.exit(1);
  }
}

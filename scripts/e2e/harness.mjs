// Harness for driving Residuum inside a real VS Code (code-server 4.100.3) with playwright-core and Debian's chromium.
// Shared by `npm start` (scripts/start.mjs), the end-to-end tests (test/e2e/) and `npm run bench:editor`.
// Recipe and reasons: ../shared/vscode-conventions.md section 5(c). Types: harness.d.mts.
import { spawn, spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { ROOT, TOOLS_DIR, ensureTools } from '../tools.mjs';

export { ROOT, TOOLS_DIR, ensureTools };

/** Chromium flags for headless runs in containers and offline machines. */
export const CHROMIUM_ARGS = [
  '--no-sandbox',
  '--disable-gpu',
  '--disable-dev-shm-usage',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--no-first-run',
];

/** Theme ids (the `workbench.colorTheme` values) of VS Code 1.100's built-in themes, by kind. */
export const THEMES = {
  light: 'Default Light Modern',
  dark: 'Default Dark Modern',
  'high-contrast': 'Default High Contrast',
};
/** The labels the theme picker shows for THEMES (it filters on labels, the ids are descriptions). */
const THEME_LABELS = {
  'Default Light Modern': 'Light Modern',
  'Default Dark Modern': 'Dark Modern',
  'Default High Contrast': 'Dark High Contrast',
};

/** User settings every run starts from: no start page, no telemetry, no update checks. */
export const BASE_SETTINGS = {
  'workbench.startupEditor': 'none',
  'workbench.tips.enabled': false,
  'workbench.welcomePage.walkthroughs.openOnInstall': false,
  'telemetry.telemetryLevel': 'off',
  'update.mode': 'none',
  'extensions.autoUpdate': false,
  'extensions.autoCheckUpdates': false,
  'extensions.ignoreRecommendations': true,
  'security.workspace.trust.enabled': false,
  'git.enabled': false,
  'chat.disableAIFeatures': true,
};

function run(cmd, args, opts = {}) {
  const r = spawnSync(cmd, args, { cwd: ROOT, encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'], ...opts });
  if (r.status !== 0) {
    const out = `${r.stdout ?? ''}${r.stderr ?? ''}`.trim().split('\n').slice(-30).join('\n');
    throw new Error(`${cmd} ${args.join(' ')} failed (exit ${r.status}${r.error ? `, ${r.error.message}` : ''}):\n${out}`);
  }
  return r.stdout ?? '';
}

/**
 * Builds dist/ (node scripts/build.mjs) and packages the extension into `outVsix` with vsce.
 * Uses the project's .vscodeignore when it keeps .tools/ out of the package, else scripts/e2e/vscodeignore.
 * @param {string} outVsix
 * @returns {{vsix: string, bytes: number}}
 */
export function buildAndPackage(outVsix = path.join(TOOLS_DIR, 'residuum.vsix')) {
  run(process.execPath, ['scripts/build.mjs']);
  if (!existsSync(path.join(ROOT, 'dist', 'extension.js'))) {
    throw new Error('node scripts/build.mjs produced no dist/extension.js (is extension/host/extension.ts there?)');
  }
  mkdirSync(path.dirname(outVsix), { recursive: true });
  rmSync(outVsix, { force: true });
  const projectIgnore = path.join(ROOT, '.vscodeignore');
  const ignoreFile =
    existsSync(projectIgnore) && /^\s*\.tools\b/m.test(readFileSync(projectIgnore, 'utf8'))
      ? projectIgnore
      : path.join(ROOT, 'scripts', 'e2e', 'vscodeignore');
  const args = ['package', '--no-dependencies', '--out', outVsix, '--ignoreFile', ignoreFile];
  if (!existsSync(path.join(ROOT, 'LICENSE')) && !existsSync(path.join(ROOT, 'LICENSE.md'))) args.push('--skip-license');
  run(path.join(ROOT, 'node_modules', '.bin', 'vsce'), args);
  if (!existsSync(outVsix)) throw new Error(`vsce reported success but wrote no ${outVsix}`);
  return { vsix: outVsix, bytes: statSync(outVsix).size };
}

/**
 * A fresh code-server profile: config file, user-data dir with seeded settings, extensions dir.
 * @param {string} dir  folder to create it in (emptied first)
 * @param {Record<string, unknown>} [settings]  extra user settings
 */
export function createProfile(dir, settings = {}) {
  rmSync(dir, { recursive: true, force: true });
  const userData = path.join(dir, 'user-data');
  const extensions = path.join(dir, 'extensions');
  const config = path.join(dir, 'config.yaml');
  mkdirSync(path.join(userData, 'User'), { recursive: true });
  mkdirSync(extensions, { recursive: true });
  writeFileSync(config, 'bind-addr: 127.0.0.1:0\nauth: none\ncert: false\n');
  const profile = { dir, userData, extensions, config, settingsFile: path.join(userData, 'User', 'settings.json') };
  writeSettings(profile, settings);
  return profile;
}

/**
 * Rewrites the profile's user settings (BASE_SETTINGS plus `settings`); a running code-server applies them live.
 * @param {{settingsFile: string}} profile
 * @param {Record<string, unknown>} settings
 */
export function writeSettings(profile, settings) {
  writeFileSync(profile.settingsFile, JSON.stringify({ ...BASE_SETTINGS, ...settings }, null, 2) + '\n');
}

/**
 * Installs a .vsix into the profile's extensions dir.
 * @param {string} codeServerBin
 * @param {{config: string, userData: string, extensions: string}} profile
 * @param {string} vsix
 */
export function installExtension(codeServerBin, profile, vsix) {
  const out = run(codeServerBin, [
    '--config', profile.config,
    '--user-data-dir', profile.userData,
    '--extensions-dir', profile.extensions,
    '--install-extension', vsix,
    '--force',
  ]);
  if (!/successfully installed/i.test(out)) throw new Error(`code-server --install-extension ${vsix} said:\n${out}`);
  return out.trim();
}

/**
 * Starts code-server on 127.0.0.1 with a free port and `--auth none`; resolves once it listens.
 * @param {object} o
 * @param {string} o.codeServerBin
 * @param {{config: string, userData: string, extensions: string}} o.profile
 * @param {string} o.workspace  folder to open
 * @param {Record<string, string>} [o.env]  extra environment (reaches the extension host)
 * @param {number} [o.port]  0 (default) for a free port
 * @param {(line: string) => void} [o.onLog]
 */
export function startCodeServer({ codeServerBin, profile, workspace, env = {}, port = 0, onLog }) {
  const args = [
    '--config', profile.config,
    '--user-data-dir', profile.userData,
    '--extensions-dir', profile.extensions,
    '--auth', 'none',
    '--bind-addr', `127.0.0.1:${port}`,
    '--disable-telemetry',
    '--disable-update-check',
    '--disable-workspace-trust',
    '--disable-getting-started-override',
    workspace,
  ];
  const child = spawn(codeServerBin, args, {
    cwd: ROOT,
    env: { ...process.env, ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
    detached: true,
  });
  const logLines = [];
  return new Promise((resolve, reject) => {
    let settled = false;
    const timer = setTimeout(() => fail(new Error('code-server did not report a listening port within 60 s')), 60_000);
    function fail(err) {
      if (settled) return;
      settled = true;
      clearTimeout(timer);
      stop();
      reject(new Error(`${err.message}\n--- code-server output ---\n${logLines.slice(-40).join('\n')}`));
    }
    function stop() {
      return new Promise((res) => {
        if (child.exitCode !== null || child.signalCode !== null) return res();
        child.once('exit', () => res());
        try {
          process.kill(-child.pid, 'SIGTERM');
        } catch {
          child.kill('SIGTERM');
        }
        setTimeout(() => {
          try {
            process.kill(-child.pid, 'SIGKILL');
          } catch {
            /* already gone */
          }
          res();
        }, 5000).unref();
      });
    }
    const onData = (buf) => {
      for (const line of buf.toString('utf8').split('\n')) {
        if (!line.trim()) continue;
        logLines.push(line);
        if (logLines.length > 2000) logLines.shift();
        onLog?.(line);
        const m = /HTTP server listening on (http:\/\/127\.0\.0\.1:(\d+))/.exec(line);
        if (m && !settled) {
          settled = true;
          clearTimeout(timer);
          const url = m[1];
          resolve({
            url,
            port: Number(m[2]),
            workspace,
            child,
            log: logLines,
            workbenchUrl: `${url}/?folder=${encodeURIComponent(workspace)}`,
            stop,
          });
        }
      }
    };
    child.stdout.on('data', onData);
    child.stderr.on('data', onData);
    child.once('error', (e) => fail(e));
    child.once('exit', (code, sig) => fail(new Error(`code-server exited early (code ${code}, signal ${sig})`)));
  });
}

/**
 * Launches Debian's chromium headless through playwright-core, with a fresh user-data dir.
 * @param {string} chromium  executable path
 */
export async function launchBrowser(chromium) {
  const { chromium: pw } = await import('playwright-core');
  const userDataDir = mkdtempSync(path.join(TOOLS_DIR, 'chromium-profile-'));
  const context = await pw.launchPersistentContext(userDataDir, {
    executablePath: chromium,
    headless: true,
    args: CHROMIUM_ARGS,
    viewport: { width: 1600, height: 1000 },
  });
  return {
    context,
    async close() {
      await context.close().catch(() => undefined);
      rmSync(userDataDir, { recursive: true, force: true });
    },
  };
}

/**
 * Opens the workbench and waits for it to be ready.
 * @param {import('playwright-core').Page} page
 * @param {string} workbenchUrl
 */
export async function openWorkbench(page, workbenchUrl) {
  await page.goto(workbenchUrl, { waitUntil: 'domcontentloaded', timeout: 60_000 });
  await page.locator('div.monaco-workbench').waitFor({ state: 'visible', timeout: 60_000 });
  await page.locator('.part.statusbar').waitFor({ state: 'visible', timeout: 60_000 });
}

/**
 * Runs a command from the palette: F1, type the title, click the exact row. Retries, since the palette can
 * open before the extension's commands are registered.
 * @param {import('playwright-core').Page} page
 * @param {string} title  e.g. "Residuum: Open Demo Log"
 * @param {{attempts?: number}} [opts]
 */
export async function runCommand(page, title, { attempts = 6, opensQuickInput = false } = {}) {
  const widget = page.locator('.quick-input-widget');
  await retryOnPage(
    page,
    attempts,
    async () => {
      if (!(await widget.isVisible())) {
        await page.locator('div.monaco-workbench').click({ position: { x: 5, y: 300 }, force: true, trial: true }).catch(() => undefined);
        await page.keyboard.press('F1');
      }
      const input = widget.locator('input.input');
      await input.waitFor({ state: 'visible', timeout: 5000 });
      await input.fill(`>${title}`);
      const row = widget
        .locator('.monaco-list-row')
        .filter({ has: page.locator('.monaco-highlighted-label, .label-name', { hasText: title }) })
        .first();
      await row.waitFor({ state: 'visible', timeout: 4000 });
      const label = (await row.getAttribute('aria-label')) ?? '';
      if (!label.toLowerCase().startsWith(title.toLowerCase())) throw new Error(`palette row is "${label}"`);
      await row.click();
      if (opensQuickInput) {
        // The command shows its own quick input in the same widget: wait for the palette's text to go.
        await page.waitForFunction((sel) => !document.querySelector(sel)?.value?.startsWith('>'), '.quick-input-widget input.input', { timeout: 5000 });
      } else {
        await widget.waitFor({ state: 'hidden', timeout: 5000 });
      }
    },
    (last) => `could not run "${title}" from the command palette after ${attempts} attempts: ${last}`,
    (i) => 1000 + 500 * i,
  );
}

/**
 * Runs `attempt(i)` up to `attempts` times until it resolves and returns its value. After a failed attempt it
 * presses Escape (closing the quick input or menu the attempt may have left open) and waits `pause_ms(i)`; when
 * every attempt failed it throws an Error whose message is `failure(the last error's message)`.
 * @template T
 * @param {import('playwright-core').Page} page
 * @param {number} attempts
 * @param {(i: number) => Promise<T>} attempt
 * @param {(lastMessage: string) => string} failure
 * @param {(i: number) => number} [pause_ms]
 * @returns {Promise<T>}
 */
export async function retryOnPage(page, attempts, attempt, failure, pause_ms = () => 1000) {
  let lastError;
  for (let i = 0; i < attempts; i++) {
    try {
      return await attempt(i);
    } catch (e) {
      lastError = e;
      await page.keyboard.press('Escape').catch(() => undefined);
      await page.waitForTimeout(pause_ms(i));
    }
  }
  throw new Error(failure(lastError instanceof Error ? lastError.message : String(lastError)));
}

/**
 * Runs "Residuum: Open Log Analysis" and answers its open dialog (code-server shows VS Code's simple file dialog,
 * a quick input holding a path) with `file`.
 * @param {import('playwright-core').Page} page
 * @param {string} file  absolute path
 */
export async function openLogViaDialog(page, file) {
  await retryOnPage(
    page,
    3,
    async () => {
      await runCommand(page, 'Residuum: Open Log Analysis', { opensQuickInput: true });
      await answerFileDialog(page, file);
    },
    (last) => `could not open ${file} through "Residuum: Open Log Analysis": ${last}`,
  );
}

/**
 * Types `value` into a quick input and waits until it stays there: the simple file dialog fills in its own default
 * (the folder, a file name) a moment after it opens, which can overwrite what was typed; type again until the value
 * holds for two checks in a row.
 * @param {import('playwright-core').Page} page
 * @param {import('playwright-core').Locator} input
 * @param {string} value
 */
export async function fillAndHold(page, input, value, timeout_ms = 15_000) {
  const end = Date.now() + timeout_ms;
  let held = 0;
  while (Date.now() < end) {
    if ((await input.inputValue()) !== value) {
      held = 0;
      await input.fill(value);
    } else if (++held >= 2) return;
    await page.waitForTimeout(300);
  }
  throw new Error(`the dialog's input did not keep "${value}" (it shows "${await input.inputValue()}")`);
}

/**
 * Answers VS Code's simple file dialog (open or save; code-server has no native one), shown as a quick input
 * holding a path, with `file`: waits for the dialog's starting path, types `file`, waits for it to settle, accepts.
 * @param {import('playwright-core').Page} page
 * @param {string} file  absolute path
 */
export async function answerFileDialog(page, file) {
  const widget = page.locator('.quick-input-widget');
  const input = widget.locator('input.input');
  await input.waitFor({ state: 'visible', timeout: 15_000 });
  await page.waitForFunction((sel) => document.querySelector(sel)?.value?.startsWith('/'), '.quick-input-widget input.input', { timeout: 10_000 });
  await fillAndHold(page, input, file);
  await input.press('Enter');
  await widget.waitFor({ state: 'hidden', timeout: 10_000 });
}

/**
 * Switches the colour theme through the palette ("Preferences: Color Theme"), as a user would.
 * @param {import('playwright-core').Page} page
 * @param {string} themeLabel  a theme id, e.g. THEMES.dark
 */
export async function pickColorTheme(page, themeLabel) {
  await retryOnPage(
    page,
    4,
    async () => {
      await runCommand(page, 'Preferences: Color Theme', { opensQuickInput: true });
      const widget = page.locator('.quick-input-widget');
      const input = widget.locator('input.input');
      await input.waitFor({ state: 'visible', timeout: 5000 });
      const label = THEME_LABELS[themeLabel] ?? themeLabel;
      await input.fill(label);
      // The filtered list previews the focused theme; Enter accepts the focused row once it is ours.
      const focused = widget.locator('.monaco-list-row.focused').filter({ hasText: themeLabel }).first();
      await focused.waitFor({ state: 'visible', timeout: 5000 });
      await input.press('Enter');
      await widget.waitFor({ state: 'hidden', timeout: 5000 });
    },
    (last) => `could not pick the colour theme "${themeLabel}": ${last}`,
  );
}

/**
 * The visible Residuum panel's document: the webview is an iframe inside an iframe; of the ready webviews, the last
 * visible one (a hidden editor group keeps its webview's iframe in the page).
 * @param {import('playwright-core').Page} page
 */
export function webviewFrame(page) {
  return page.locator('iframe.webview.ready').filter({ visible: true }).last().contentFrame().locator('#active-frame').contentFrame();
}

/**
 * Waits for the in-host self test's result file and parses it: `<JSON>\n<N passed, N failed>\n`.
 * @param {string} file
 * @param {number} timeout_ms
 */
export async function waitForSelfTest(file, timeout_ms) {
  const end = Date.now() + timeout_ms;
  while (Date.now() < end) {
    if (existsSync(file)) {
      const text = readFileSync(file, 'utf8').trim();
      const lines = text.split('\n');
      const summary = lines.at(-1) ?? '';
      const m = /^(\d+) passed, (\d+) failed$/.exec(summary);
      if (m) {
        const json = JSON.parse(lines.slice(0, -1).join('\n'));
        return { summary, passed: Number(m[1]), failed: Number(m[2]), results: json.results };
      }
    }
    await new Promise((r) => setTimeout(r, 250));
  }
  throw new Error(`the in-host self test wrote no result to ${file} within ${timeout_ms / 1000} s`);
}

/**
 * Copies a folder (e.g. demo/workspace) into a fresh scratch folder under .tools/ and returns its path.
 * @param {string} src
 * @param {string} name
 */
export function scratchCopy(src, name) {
  const dst = path.join(TOOLS_DIR, 'runs', name);
  rmSync(dst, { recursive: true, force: true });
  mkdirSync(dst, { recursive: true });
  if (existsSync(src)) cpSync(src, dst, { recursive: true });
  return dst;
}

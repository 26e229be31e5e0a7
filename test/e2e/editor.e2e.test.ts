/**
 * End-to-end: Residuum packaged as a .vsix, installed into a real VS Code (code-server 4.100.3, VS Code 1.100.3) and
 * driven headless through Debian's chromium with playwright-core. Recipe: ../shared/vscode-conventions.md sec 5(c).
 *
 * Checks, in one code-server session (the steps share the page, so they run in order):
 * - the in-host self test (extension/host/selfTest.ts, env RESIDUUM_SELFTEST_OUT) reports `N passed, 0 failed`;
 * - "Residuum: Open Demo Log" from the command palette shows the panel, whose charts carry data;
 * - choosing a worst epoch in the panel puts the log's cursor on that epoch's line (status bar "Ln L, Col 1");
 * - the Problems panel counts the log's findings;
 * - the panel is screenshotted in light, dark and high-contrast themes (test-output/screenshots/);
 * - a log full of markup payloads runs no script and leaves no markup element in the panel;
 * - no Content Security Policy violation is logged by our webview (a positive control proves violations are seen).
 *
 * Tools: scripts/tools.mjs installs code-server into .tools/ on first use (about 3 minutes); when it cannot, the
 * test FAILS with the reason. Dev-only overrides: RESIDUUM_E2E_VSIX (a prebuilt .vsix), RESIDUUM_E2E_DEMO (the log).
 * Wall time after the tools are installed: about 1-2 minutes.
 */
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { copyFileSync, existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type { ConsoleMessage, FrameLocator, Page } from 'playwright-core';
import * as h from '../../scripts/e2e/harness.mjs';
import * as probes from '../../scripts/e2e/probes.mjs';
import { HOSTILE_PAYLOADS, hostileCsv } from './hostileLog';

const ROOT = h.ROOT;
const RUN_DIR = path.join(h.TOOLS_DIR, 'runs', 'e2e');
const SCREENSHOT_DIR = path.join(ROOT, 'test-output', 'screenshots');
const DEMO_LOG = process.env.RESIDUUM_E2E_DEMO ?? path.join(ROOT, 'demo', 'warehouse-flight.csv');
const DEMO_WORKSPACE = path.join(ROOT, 'demo', 'workspace');
const HOSTILE_NAME = 'hostile-markup.csv';
const CSP_TEXT = 'violates the following Content Security Policy';

interface LoggedMessage {
  type: string;
  text: string;
  url: string;
}

let codeServer: h.CodeServer | undefined;
let browser: { close(): Promise<void> } | undefined;
let page: Page;
let profile: h.Profile;
let workspace = '';
let selfTestOut = '';
const messages: LoggedMessage[] = [];
const pageErrors: string[] = [];

/** The visible Residuum panel's document (iframe.webview.ready > #active-frame). */
function panel(): FrameLocator {
  return page.locator('iframe.webview.ready').filter({ visible: true }).last().contentFrame().locator('#active-frame').contentFrame();
}

/** CSP violations logged by a webview (the workbench's own messages are not ours). */
function webviewCspViolations(from = 0): LoggedMessage[] {
  return messages.slice(from).filter((m) => m.text.includes(CSP_TEXT) && isWebviewUrl(m.url));
}

function isWebviewUrl(url: string): boolean {
  return url.includes('/webview/') || url.startsWith('vscode-webview:') || url.includes('vscode-resource') || url === '';
}

async function waitForPanelReady(): Promise<FrameLocator> {
  const f = panel();
  await f.locator('main#app[data-state="ready"]').waitFor({ state: 'attached', timeout: 90_000 });
  return f;
}

async function statusBarLine(): Promise<number | undefined> {
  const text = (await page.locator('[id="status.editor.selection"]').textContent({ timeout: 5000 }).catch(() => null)) ?? '';
  const m = /Ln (\d+),/.exec(text);
  return m ? Number(m[1]) : undefined;
}

async function waitForStatusBarLine(line: number, timeout_ms = 20_000): Promise<number | undefined> {
  const end = Date.now() + timeout_ms;
  let last: number | undefined;
  while (Date.now() < end) {
    last = await statusBarLine();
    if (last === line) return last;
    await page.waitForTimeout(200);
  }
  return last;
}

async function waitForFile(file: string, timeout_ms: number): Promise<boolean> {
  const end = Date.now() + timeout_ms;
  while (Date.now() < end) {
    if (existsSync(file)) return true;
    await new Promise((r) => setTimeout(r, 250));
  }
  return existsSync(file);
}

/** Selects the panel's tab whose label matches `label`. */
async function showTab(f: FrameLocator, label: RegExp): Promise<void> {
  const tab = f.locator('vscode-panel-tab, [role="tab"]').filter({ hasText: label }).first();
  await tab.click();
  await expect.poll(() => tab.getAttribute('aria-selected'), { timeout: 10_000 }).toBe('true');
}

/** Shows the panel's first chart view (the overview tab has no time charts). */
async function showChartTab(f: FrameLocator): Promise<void> {
  await showTab(f, /Innovations|NIS/);
  await f.locator('section.chart canvas').first().waitFor({ state: 'visible', timeout: 10_000 });
}

async function setTheme(kind: keyof typeof h.THEMES): Promise<void> {
  if ((await panel().locator(`body.vscode-${kind}`).count()) === 0) await h.pickColorTheme(page, h.THEMES[kind]);
  await panel().locator(`body.vscode-${kind}`).waitFor({ state: 'attached', timeout: 30_000 });
}

describe('Residuum in a real VS Code (code-server + chromium)', () => {
  beforeAll(async () => {
    // Fails (never skips) with the reason when the tools cannot be installed.
    const tools = h.ensureTools();
    if (!existsSync(DEMO_LOG)) throw new Error(`the demo log ${DEMO_LOG} is missing (created by the demo generator)`);
    const vsix = process.env.RESIDUUM_E2E_VSIX ?? h.buildAndPackage(path.join(RUN_DIR, 'residuum.vsix')).vsix;

    rmSync(RUN_DIR + '-ws', { recursive: true, force: true });
    profile = h.createProfile(path.join(RUN_DIR, 'profile'));
    h.installExtension(tools.codeServerBin, profile, vsix);

    workspace = h.scratchCopy(DEMO_WORKSPACE, 'e2e-workspace');
    copyFileSync(DEMO_LOG, path.join(workspace, path.basename(DEMO_LOG)));
    writeFileSync(path.join(workspace, HOSTILE_NAME), hostileCsv());
    mkdirSync(SCREENSHOT_DIR, { recursive: true });
    selfTestOut = path.join(RUN_DIR, 'selftest.txt');
    rmSync(selfTestOut, { force: true });
    rmSync(`${selfTestOut}.started`, { force: true });

    codeServer = await h.startCodeServer({
      codeServerBin: tools.codeServerBin,
      profile,
      workspace,
      env: { RESIDUUM_SELFTEST_OUT: selfTestOut, RESIDUUM_SELFTEST_LOG: path.join(workspace, path.basename(DEMO_LOG)) },
    });
    const b = await h.launchBrowser(tools.chromium);
    browser = b;
    page = b.context.pages()[0] ?? (await b.context.newPage());
    page.on('console', (m: ConsoleMessage) => messages.push({ type: m.type(), text: m.text(), url: m.location().url }));
    page.on('pageerror', (e: Error) => pageErrors.push(e.message));
    await h.openWorkbench(page, codeServer.workbenchUrl);
    // More room for the panel in the screenshots (code-server opens the Extensions view after an install).
    await h.runCommand(page, 'View: Close Primary Side Bar');
  }, 900_000);

  afterEach(async (ctx) => {
    if (ctx.task.result?.state !== 'fail' || !page || page.isClosed()) return;
    const name = ctx.task.name.replace(/[^a-z0-9]+/gi, '-').slice(0, 60);
    await page.screenshot({ path: path.join(SCREENSHOT_DIR, `failure-${name}.png`) }).catch(() => undefined);
    const frames = await page
      .locator('iframe')
      .evaluateAll((els) => els.map((e) => `${e.className} ${Math.round(e.getBoundingClientRect().width)}x${Math.round(e.getBoundingClientRect().height)}`))
      .catch(() => []);
    console.log(`after failure of "${ctx.task.name}": iframes ${JSON.stringify(frames)}; see test-output/screenshots/failure-${name}.png`);
  });

  afterAll(async () => {
    if (page && !page.isClosed()) await page.screenshot({ path: path.join(SCREENSHOT_DIR, 'workbench-final.png') }).catch(() => undefined);
    await browser?.close();
    await codeServer?.stop();
  });

  it('passes the in-host self test against the real API', async () => {
    // The self test starts when the extension activates. If nothing activated it yet, a command that needs no log
    // does; then the editor is left alone until the self test has written its result.
    if (!(await waitForFile(`${selfTestOut}.started`, 20_000))) await h.runCommand(page, 'Residuum: Go to Previous Worst Epoch');
    const r = await h.waitForSelfTest(selfTestOut, 150_000);
    const failures = r.results.filter((x) => !x.ok).map((x) => `${x.name}: ${x.detail}`);
    expect(failures, `in-host failures:\n${failures.join('\n')}`).toEqual([]);
    expect(r.failed).toBe(0);
    // commands, configuration, API, open, diagnostics, next worst, previous worst
    expect(r.passed).toBeGreaterThanOrEqual(7);
    expect(r.summary).toBe(`${r.passed} passed, 0 failed`);
  }, 180_000);

  it('opens the demo log from the command palette and renders charts with data', async () => {
    // One panel at a time keeps the page unambiguous (the self test left its own panel open).
    await h.runCommand(page, 'View: Close All Editors');
    await h.runCommand(page, 'Residuum: Open Demo Log');
    const f = await waitForPanelReady();
    await f.locator('body[data-charts-rendered]').waitFor({ state: 'attached', timeout: 90_000 });
    const charts = f.locator('section.chart[data-series]');
    const n = await charts.count();
    expect(n, 'charts in the panel').toBeGreaterThan(0);
    const points = await charts.evaluateAll((els) => els.map((e) => [e.getAttribute('data-series'), Number(e.getAttribute('data-points'))] as const));
    const empty = points.filter(([, p]) => !(Number.isFinite(p) && p > 0));
    expect(empty, `charts without data (of ${n}): ${JSON.stringify(empty)}`).toEqual([]);
    expect(Number(await f.locator('body').getAttribute('data-charts-rendered'))).toBe(n);
    await expect.poll(() => f.locator('[data-testid="worst-list"] button[data-line]').count(), { timeout: 30_000 }).toBeGreaterThan(0);
    expect(await f.locator('[data-testid="findings-list"]').count()).toBe(1);
    expect(await f.locator('[data-testid="findings-list"] li').count()).toBeGreaterThan(0);
    expect(await f.locator('[data-testid="overview"]').count()).toBeGreaterThan(0);
    await page.screenshot({ path: path.join(SCREENSHOT_DIR, 'workbench-demo.png') });
    // A chart view: its canvases have a size and are not blank.
    await showChartTab(f);
    const drawn = await f.locator('section.chart canvas').evaluateAll(probes.countDrawnCanvases);
    expect(drawn, 'visible canvases with something drawn').toBeGreaterThan(0);
  }, 240_000);

  it('choosing a worst epoch puts the log cursor on its line', async () => {
    const f = panel();
    await showTab(f, /Overview/);
    const buttons = f.locator('[data-testid="worst-list"] button[data-line]');
    const count = await buttons.count();
    expect(count).toBeGreaterThan(0);
    // The self test left the cursor on the worst epoch: choose a different one first, then the worst.
    const order = count > 1 ? [1, 0] : [0];
    for (const i of order) {
      const b = buttons.nth(i);
      const line = Number(await b.getAttribute('data-line'));
      expect(Number.isInteger(line) && line >= 1, `data-line ${line}`).toBe(true);
      await b.click();
      const seen = await waitForStatusBarLine(line);
      expect(seen, `status bar line after choosing worst #${i} (data-line ${line})`).toBe(line);
      // The log opens beside the panel: the panel stays visible with its list.
      expect(await panel().locator('[data-testid="worst-list"] button[data-line]').count(), 'the panel is still visible after the jump').toBe(count);
    }
    const tabs = await page.locator('.tabs-container .tab').evaluateAll((els) => els.map((e) => e.getAttribute('aria-label') ?? ''));
    expect(tabs.some((t) => t.includes(path.basename(DEMO_LOG))), `editor tabs: ${tabs.join(' | ')}`).toBe(true);
  }, 120_000);

  it('lists the findings in the Problems panel', async () => {
    const item = page.locator('[id="status.problems"]');
    await expect.poll(async () => problemCount(await item.getAttribute('aria-label')), { timeout: 30_000 }).toBeGreaterThan(0);
    const total = problemCount(await item.getAttribute('aria-label'));
    await page.keyboard.press('Control+Shift+M');
    const rows = page.locator('.markers-panel .monaco-list-row');
    await rows.first().waitFor({ state: 'visible', timeout: 15_000 });
    const fileRow = page.locator('.markers-panel .monaco-list-row').filter({ hasText: path.basename(DEMO_LOG) }).first();
    await fileRow.waitFor({ state: 'visible', timeout: 15_000 });
    // Diagnostics are capped per log by a setting; only the demo log has a panel open now, so the total is its count.
    const cap = diagnosticsCap();
    expect(total, `problems ${total} vs the cap ${cap.key} = ${cap.cap}`).toBeLessThanOrEqual(cap.cap);
    const badge = Number((await fileRow.locator('.monaco-count-badge').first().textContent()) ?? NaN);
    expect(badge, 'the demo log row counts every problem').toBe(total);
    await page.screenshot({ path: path.join(SCREENSHOT_DIR, 'workbench-problems.png') });
    await page.keyboard.press('Control+Shift+M');
  }, 60_000);

  it('screenshots the panel in light, dark and high-contrast themes', async () => {
    await showChartTab(panel());
    const backgrounds = new Set<string>();
    for (const kind of ['light', 'dark', 'high-contrast'] as const) {
      await setTheme(kind);
      const f = panel();
      await f.locator('body[data-charts-rendered]').waitFor({ state: 'attached', timeout: 30_000 });
      const bg = await f.locator('body').evaluate(probes.editorBackground);
      backgrounds.add(bg);
      await page.waitForTimeout(300); // let the charts repaint with the new theme colours before the picture
      const frame = page.locator('iframe.webview.ready').filter({ visible: true }).last();
      await frame.screenshot({ path: path.join(SCREENSHOT_DIR, `panel-${kind}.png`) });
      await page.screenshot({ path: path.join(SCREENSHOT_DIR, `workbench-${kind}.png`) });
    }
    expect(backgrounds.size, `editor backgrounds per theme: ${[...backgrounds].join(', ')}`).toBe(3);
  }, 240_000);

  it('runs no script from a log full of markup and shows it as text', async () => {
    const from = messages.length;
    await h.runCommand(page, 'View: Close All Editors');
    await h.openLogViaDialog(page, path.join(workspace, HOSTILE_NAME));
    const f = panel();
    await f.locator('main#app[data-state="ready"], main#app[data-state="error"]').first().waitFor({ state: 'attached', timeout: 90_000 });
    await expect.poll(() => f.locator('main#app').innerText().then((t) => t.length), { timeout: 30_000 }).toBeGreaterThan(0);
    const inspection = await f.locator('body').evaluate(probes.inspectForInjection);
    expect(inspection.pwned).toBeNull();
    expect(inspection.parentPwned).toBeNull();
    expect(await page.evaluate(probes.pwnedFlag)).toBeNull();
    const injectedScripts = inspection.scripts.filter((s) => s.text.includes('__pwned') || (s.src !== '' && !s.src.endsWith('/webview.js')));
    expect({ imgX: inspection.imgX, handlers: inspection.handlers, jsLinks: inspection.jsLinks, scripts: injectedScripts.length, svgs: inspection.svgs }).toEqual({
      imgX: 0,
      handlers: 0,
      jsLinks: 0,
      scripts: 0,
      svgs: 0,
    });
    // The payloads reach the panel as literal text somewhere (ids, channel names or metadata), not as markup.
    const shown = Object.values(HOSTILE_PAYLOADS).filter((p) => inspection.text.includes(p.slice(0, 12)));
    expect(shown.length + (inspection.text.includes('<img src=x') ? 1 : 0), 'markup shown as text').toBeGreaterThan(0);
    expect(webviewCspViolations(from).map((m) => m.text)).toEqual([]);
    await page.screenshot({ path: path.join(SCREENSHOT_DIR, 'workbench-hostile.png') });
  }, 180_000);

  it('logs no Content Security Policy violation from the panel (and would see one)', async () => {
    const before = webviewCspViolations();
    expect(before.map((m) => m.text)).toEqual([]);
    // Positive control: an inline script added to the panel must be refused and the refusal must reach the log.
    const f = panel();
    const ran = await f.locator('body').evaluate(probes.injectInlineScript);
    expect(ran, 'an inline script ran inside the panel: the CSP is not strict').toBeNull();
    await expect.poll(() => webviewCspViolations().length, { timeout: 10_000 }).toBeGreaterThan(0);
    expect(pageErrors.filter((e) => /residuum|webview\.js/i.test(e))).toEqual([]);
  }, 60_000);
});

/** The manifest's per-log diagnostics cap: the default of `residuum.*` setting about problems/diagnostics and a maximum. */
function diagnosticsCap(): { key: string; cap: number } {
  type Section = { properties?: Record<string, { default?: unknown }> };
  const manifest = JSON.parse(readFileSync(path.join(ROOT, 'package.json'), 'utf8')) as { contributes?: { configuration?: Section | Section[] } };
  const conf = manifest.contributes?.configuration;
  const props = Object.assign({}, ...(Array.isArray(conf) ? conf : conf ? [conf] : []).map((c) => c.properties ?? {})) as Record<string, { default?: unknown }>;
  for (const [key, spec] of Object.entries(props)) {
    if (/diagnostic|problem/i.test(key) && /max|cap|limit|count/i.test(key) && typeof spec.default === 'number') return { key, cap: spec.default };
  }
  throw new Error('package.json contributes no residuum.* setting capping the diagnostics per log');
}

/** Total of errors, warnings and infos from the status bar's problems item aria-label. */
function problemCount(label: string | null): number {
  if (!label) return 0;
  let total = 0;
  for (const m of label.matchAll(/(\d+)/g)) total += Number(m[1]);
  return total;
}

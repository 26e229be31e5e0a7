/**
 * The set-up every end-to-end test file shares: Residuum packaged as a .vsix, installed into a fresh code-server
 * profile, code-server started on a scratch workspace and driven headless through Debian's chromium with
 * playwright-core (the harness of scripts/e2e/harness.mjs; recipe: ../shared/vscode-conventions.md sec 5(c)).
 *
 * `useWorkbench` registers the vitest hooks of one test file:
 * - beforeAll: ensures the tools (FAILS, never skips, with the reason when code-server or chromium cannot be had),
 *   lets the file prepare its workspace, builds and packages the .vsix (or takes RESIDUUM_E2E_VSIX, dev only),
 *   creates a profile under `.tools/runs/<runDir>/profile`, installs the extension, starts code-server, launches
 *   chromium, collects the page's console messages and page errors, opens the workbench and closes the side bar;
 * - afterEach: a screenshot of a failed test, `test-output/screenshots/failure-<name>-<test>.png`;
 * - afterAll: closes the browser and stops code-server.
 * The helpers below read the page of that workbench (the visible panel, the status bar line, the webview's CSP
 * violations) and the disk (a file that appears, a log's notes sidecar).
 */
import { afterAll, afterEach, beforeAll, expect } from 'vitest';
import { existsSync, mkdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import type { ConsoleMessage, FrameLocator, Page } from 'playwright-core';
import * as h from '../../scripts/e2e/harness.mjs';

/** Where the tests put their screenshots (git-ignored). */
export const SCREENSHOT_DIR = path.join(h.ROOT, 'test-output', 'screenshots');

/** The text of a Content Security Policy violation in the browser's console. */
export const CSP_TEXT = 'violates the following Content Security Policy';

/** A console message of the workbench page: its type, text and the URL of the document that logged it. */
export interface LoggedMessage {
  type: string;
  text: string;
  url: string;
}

/** What a test file's `prepare` gives back: the workspace folder to open and any extra code-server environment. */
export interface PreparedWorkspace {
  workspace: string;
  env?: Record<string, string>;
}

/** Options of `useWorkbench` for what differs between the test files. */
export interface WorkbenchOptions {
  /** The folder under `.tools/runs/` for the .vsix and the profile; default `<name>-e2e`. Distinct per file. */
  runDir?: string;
  /** Runs after the failure screenshot of a failed test, with the test's name and the screenshot's path. */
  onFailure?: (wb: Workbench, testName: string, screenshot: string) => Promise<void>;
  /** Runs in afterAll before the browser closes (the page is still open). */
  beforeClose?: (wb: Workbench) => Promise<void>;
}

/**
 * One code-server session shared by the tests of a file. The fields are filled in by beforeAll (read them inside
 * tests and hooks, not at the file's top level); `messages` and `pageErrors` grow while the page runs.
 */
export interface Workbench {
  page: Page;
  workspace: string;
  profile: h.Profile;
  codeServer: h.CodeServer;
  /** The folder under `.tools/runs/` of this file (the .vsix, the profile, the file's own outputs). */
  runDir: string;
  messages: LoggedMessage[];
  pageErrors: string[];
}

/**
 * Registers beforeAll/afterEach/afterAll of an end-to-end test file (call it inside its `describe`) and returns the
 * session they fill in. `name` names the failure screenshots and, by default, the run folder; `prepare(runDir)`
 * creates the workspace's files (it may throw, failing the file with the reason) and returns the workspace folder
 * and any extra code-server environment.
 */
export function useWorkbench(
  name: string,
  prepare: (runDir: string) => PreparedWorkspace | Promise<PreparedWorkspace>,
  options: WorkbenchOptions = {},
): Workbench {
  const runDir = path.join(h.TOOLS_DIR, 'runs', options.runDir ?? `${name}-e2e`);
  // Filled in by beforeAll; until then only the arrays are there.
  const wb = { runDir, messages: [], pageErrors: [] } as unknown as Workbench;
  let browser: { close(): Promise<void> } | undefined;
  let codeServer: h.CodeServer | undefined;
  const openPage = (): Page | undefined => {
    const page = (wb as Partial<Workbench>).page;
    return page && !page.isClosed() ? page : undefined;
  };

  beforeAll(async () => {
    const tools = h.ensureTools();
    const prepared = await prepare(runDir);
    const vsix = process.env.RESIDUUM_E2E_VSIX ?? h.buildAndPackage(path.join(runDir, 'residuum.vsix')).vsix;
    wb.profile = h.createProfile(path.join(runDir, 'profile'));
    h.installExtension(tools.codeServerBin, wb.profile, vsix);
    wb.workspace = prepared.workspace;
    mkdirSync(SCREENSHOT_DIR, { recursive: true });
    codeServer = await h.startCodeServer({ codeServerBin: tools.codeServerBin, profile: wb.profile, workspace: wb.workspace, env: prepared.env });
    wb.codeServer = codeServer;
    const b = await h.launchBrowser(tools.chromium);
    browser = b;
    const page = b.context.pages()[0] ?? (await b.context.newPage());
    page.on('console', (m: ConsoleMessage) => wb.messages.push({ type: m.type(), text: m.text(), url: m.location().url }));
    page.on('pageerror', (e: Error) => wb.pageErrors.push(e.message));
    wb.page = page;
    await h.openWorkbench(page, codeServer.workbenchUrl);
    // More room for the panel (code-server opens the Extensions view after an install).
    await h.runCommand(page, 'View: Close Primary Side Bar');
  }, 900_000);

  afterEach(async (ctx) => {
    const page = openPage();
    if (ctx.task.result?.state !== 'fail' || !page) return;
    const shot = path.join(SCREENSHOT_DIR, `failure-${name}-${ctx.task.name.replace(/[^a-z0-9]+/gi, '-').slice(0, 60)}.png`);
    await page.screenshot({ path: shot }).catch(() => undefined);
    await options.onFailure?.(wb, ctx.task.name, shot);
  });

  afterAll(async () => {
    if (openPage()) await options.beforeClose?.(wb);
    await browser?.close();
    await codeServer?.stop();
  });

  return wb;
}

/** The visible Residuum panel's document (the last visible iframe.webview.ready > #active-frame). */
export function panel(page: Page): FrameLocator {
  return h.webviewFrame(page);
}

/**
 * Opens `file` through "Residuum: Open Log Analysis" and its file dialog and waits up to `timeout_ms` for the visible
 * panel to show the analysis (`main#app[data-state="ready"]`); returns the panel.
 */
export async function openLogInPanel(page: Page, file: string, timeout_ms: number): Promise<FrameLocator> {
  await h.openLogViaDialog(page, file);
  const f = panel(page);
  await f.locator('main#app[data-state="ready"]').waitFor({ state: 'attached', timeout: timeout_ms });
  return f;
}

/** The editor's cursor line from the status bar ("Ln L, Col C"), or undefined when the status bar shows none. */
export async function statusBarLine(page: Page): Promise<number | undefined> {
  const text = (await page.locator('[id="status.editor.selection"]').textContent({ timeout: 5000 }).catch(() => null)) ?? '';
  const m = /Ln (\d+),/.exec(text);
  return m ? Number(m[1]) : undefined;
}

/** Whether a console message's document is a webview's (CSP violations of the workbench itself are not ours). */
export function isWebviewUrl(url: string): boolean {
  return url.includes('/webview/') || url.startsWith('vscode-webview:') || url.includes('vscode-resource') || url === '';
}

/** The CSP violations logged by a webview since message number `from` of the session. */
export function webviewCspViolations(wb: Workbench, from = 0): LoggedMessage[] {
  return wb.messages.slice(from).filter((m) => m.text.includes(CSP_TEXT) && isWebviewUrl(m.url));
}

/** Waits up to `timeout_ms` for `file` to exist; whether it does. */
export async function waitForFile(file: string, timeout_ms: number): Promise<boolean> {
  const end = Date.now() + timeout_ms;
  while (Date.now() < end) {
    if (existsSync(file)) return true;
    await new Promise((r) => setTimeout(r, 250));
  }
  return existsSync(file);
}

/** Selects the panel's view tab whose label matches `label` and waits until it is the selected one. */
export async function showTab(f: FrameLocator, label: RegExp): Promise<void> {
  const tab = f.locator('vscode-panel-tab, [role="tab"]').filter({ hasText: label }).first();
  await tab.click();
  await expect.poll(() => tab.getAttribute('aria-selected'), { timeout: 10_000 }).toBe('true');
}

/** One note of a `<log>.notes.json` sidecar, the fields the tests read. */
export interface SidecarNote {
  id: string;
  t: number;
  text: string;
  tags?: string[];
  reset?: boolean;
}

/** The notes sidecar `<logPath>.notes.json` parsed, or undefined while it is absent or not whole JSON. */
export function readNotesSidecar(logPath: string): { notes: SidecarNote[] } | undefined {
  try {
    return JSON.parse(readFileSync(`${logPath}.notes.json`, 'utf8')) as { notes: SidecarNote[] };
  } catch {
    return undefined;
  }
}

/**
 * End-to-end, a growing log and a panel that outlives its window and its extension host: Residuum packaged as a
 * .vsix in a real VS Code (code-server + headless chromium, the shared set-up of test/e2e/workbench.ts over
 * scripts/e2e/harness.mjs).
 *
 * - A log that grows while the panel shows it (rows appended by the test) is re-read from the last byte read: the
 *   panel's epoch count grows and its `data-read-start` is the previous revision's `data-read-total` (the panel
 *   shows what the host read, see webview/main.ts markRevision); a truncated log is read again from the start and
 *   the panel says so.
 * - The demo panel with a chosen view and worst epoch comes back with its data and the same state after the window
 *   reloads (the serializer plus the webview's own state) and after the extension host restarts; no Content
 *   Security Policy violation is logged by the panel.
 * - Two logs with the same file name in different folders get tab titles that tell them apart, and each tab comes
 *   back with its own log after the extension host restarts (the visible tab at once, the hidden one when shown).
 *
 * Tools as in editor.e2e.test.ts: the test FAILS with the reason when code-server or chromium cannot be had.
 * RESIDUUM_E2E_VSIX reuses a prebuilt .vsix (dev only).
 */
import { describe, expect, it } from 'vitest';
import { appendFileSync, existsSync, mkdirSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type { FrameLocator } from 'playwright-core';
import * as h from '../../scripts/e2e/harness.mjs';
import { SCREENSHOT_DIR, panel, useWorkbench, webviewCspViolations, type Workbench } from './workbench';

const ROOT = h.ROOT;
const DEMO_LOG = path.join(ROOT, 'demo', 'warehouse-flight.csv');
const DEMO_WORKSPACE = path.join(ROOT, 'demo', 'workspace');

let livePath = '';

/** The demo log's lines (with their line ends) and the cut the live log starts with. */
const lines = existsSync(DEMO_LOG) ? readFileSync(DEMO_LOG, 'utf8').split(/(?<=\n)/) : [];
const cut = Math.floor(lines.length * 0.6);
const head = lines.slice(0, cut).join('');

/** The panel's `main#app` data attributes (revision, epochs, read-*), or undefined while it is not ready. */
async function revisionFacts(wb: Workbench): Promise<Record<string, string> | undefined> {
  const app = panel(wb.page).locator('main#app[data-state="ready"]');
  if ((await app.count()) === 0) return undefined;
  return app.evaluate((el) => ({ ...(el as unknown as { dataset: Record<string, string> }).dataset })).catch(() => undefined);
}

/** Polls the panel until `accept` holds for its facts; returns them (fails the test with the last ones seen). */
async function waitForFacts(wb: Workbench, accept: (f: Record<string, string>) => boolean, what: string, timeout_ms = 60_000): Promise<Record<string, string>> {
  const end = Date.now() + timeout_ms;
  let last: Record<string, string> | undefined;
  while (Date.now() < end) {
    last = await revisionFacts(wb);
    if (last && accept(last)) return last;
    await wb.page.waitForTimeout(250);
  }
  throw new Error(`the panel did not show ${what} within ${timeout_ms / 1000} s; last seen: ${JSON.stringify(last)}`);
}

/** Pids of the extension host processes started by the code-server whose pid is `rootPid` (from /proc). */
function extensionHostPids(rootPid: number): number[] {
  const parent = new Map<number, number>();
  const cmd = new Map<number, string>();
  for (const name of readdirSync('/proc')) {
    if (!/^\d+$/.test(name)) continue;
    try {
      const stat = readFileSync(`/proc/${name}/stat`, 'utf8');
      // pid (comm) state ppid ...: the comm may hold spaces and parentheses, so split after the last ')'.
      const ppid = Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[1]);
      parent.set(Number(name), ppid);
      cmd.set(Number(name), readFileSync(`/proc/${name}/cmdline`, 'utf8').replace(/\0/g, ' '));
    } catch {
      // The process ended meanwhile.
    }
  }
  const descends = (pid: number): boolean => {
    for (let p = parent.get(pid), n = 0; p !== undefined && p > 1 && n < 50; p = parent.get(p), n++) if (p === rootPid) return true;
    return false;
  };
  return [...cmd].filter(([pid, c]) => /--type=extensionHost/.test(c) && descends(pid)).map(([pid]) => pid);
}

/** The label of the panel's selected view tab and the index of the worst entry marked current. */
async function panelState(f: FrameLocator): Promise<{ tab: string; worst: string | null }> {
  const tab = ((await f.locator('vscode-panel-tab[aria-selected="true"]').first().textContent()) ?? '').replace(/\s+\d+\s*$/, '').trim();
  const current = f.locator('[data-testid="worst-list"] button[aria-current="true"]');
  const worst = (await current.count()) > 0 ? await current.first().getAttribute('data-index') : null;
  return { tab, worst };
}

/** Waits for the restored demo panel: ready, charts drawn with data. */
async function waitForRestoredPanel(wb: Workbench): Promise<FrameLocator> {
  const f = panel(wb.page);
  await f.locator('main#app[data-state="ready"]').waitFor({ state: 'attached', timeout: 120_000 });
  await f.locator('body[data-charts-rendered]').waitFor({ state: 'attached', timeout: 60_000 });
  return f;
}

/**
 * Waits for the restored demo panel and checks it: the same view and worst entry as `before`, every chart with
 * data, no CSP violation logged by the panel.
 */
async function expectRestoredAsBefore(wb: Workbench, before: { tab: string; worst: string | null }): Promise<void> {
  const restored = await waitForRestoredPanel(wb);
  expect(await panelState(restored)).toEqual(before);
  const points = await restored.locator('section.chart[data-series]').evaluateAll((els) => els.map((e) => Number(e.getAttribute('data-points'))));
  expect(points.length).toBeGreaterThan(0);
  expect(points.filter((p) => !(p > 0))).toEqual([]);
  expect(webviewCspViolations(wb).map((m) => m.text)).toEqual([]);
}

describe('Residuum panel lifecycle in a real VS Code', () => {
  const wb = useWorkbench('live', () => {
    if (!existsSync(DEMO_LOG)) throw new Error(`the demo log ${DEMO_LOG} is missing (created by the demo generator)`);
    const workspace = h.scratchCopy(DEMO_WORKSPACE, 'live-e2e-workspace');
    livePath = path.join(workspace, 'live-run.csv');
    writeFileSync(livePath, head);
    return { workspace };
  });

  it('re-reads a growing log from the last byte read, and a truncated one from the start', async () => {
    await h.openLogViaDialog(wb.page, livePath);
    const first = await waitForFacts(wb, (f) => f.readMode === 'tail', 'the first reading of the live log', 120_000);
    const size1 = Buffer.byteLength(head);
    expect({ start: first.readStart, total: first.readTotal }).toEqual({ start: '0', total: String(size1) });
    const epochs1 = Number(first.epochs);
    expect(epochs1).toBeGreaterThan(0);

    // The estimator writes more rows: the panel reads only those.
    const more = lines.slice(cut).join('');
    appendFileSync(livePath, more);
    const second = await waitForFacts(wb, (f) => f.revision !== first.revision && f.readTotal !== first.readTotal, 'a reading after the append');
    expect({ start: second.readStart, bytes: second.readBytes, total: second.readTotal }).toEqual({
      start: String(size1),
      bytes: String(Buffer.byteLength(more)),
      total: String(size1 + Buffer.byteLength(more)),
    });
    expect(Number(second.epochs)).toBeGreaterThan(epochs1);
    await panel(wb.page).locator('body[data-charts-rendered]').waitFor({ state: 'attached', timeout: 30_000 });

    // The log is truncated (a new run of the estimator): read again from the start, and the panel says so.
    const short = lines.slice(0, Math.floor(cut / 2)).join('');
    writeFileSync(livePath, short);
    const third = await waitForFacts(wb, (f) => f.readRestarted === 'truncated', 'a reading from the start after the truncation');
    expect({ start: third.readStart, total: third.readTotal }).toEqual({ start: '0', total: String(Buffer.byteLength(short)) });
    expect(Number(third.epochs)).toBeLessThan(epochs1);
    await expect.poll(() => panel(wb.page).locator('header .notice').textContent(), { timeout: 10_000 }).toMatch(/truncated/);
    await wb.page.screenshot({ path: path.join(SCREENSHOT_DIR, 'workbench-live.png') });
  }, 300_000);

  it('the demo panel comes back with its data and state after a window reload', async () => {
    await h.runCommand(wb.page, 'View: Close All Editors');
    await h.runCommand(wb.page, 'Residuum: Open Demo Log');
    let f = await waitForRestoredPanel(wb);
    // Choose the second worst epoch (the log opens beside the panel), then a chart view.
    const second = f.locator('[data-testid="worst-list"] button[data-index="1"]');
    await second.click();
    await expect.poll(() => panel(wb.page).locator('[data-testid="worst-list"] button[aria-current="true"]').getAttribute('data-index'), { timeout: 15_000 }).toBe('1');
    f = panel(wb.page);
    const tab = f.locator('vscode-panel-tab').filter({ hasText: /Innovations|NIS/ }).first();
    await tab.click();
    await expect.poll(() => tab.getAttribute('aria-selected'), { timeout: 10_000 }).toBe('true');
    const before = await panelState(f);
    expect(before.worst).toBe('1');
    expect(before.tab).toMatch(/Innovations|NIS/);
    // Let the webview's setState reach the workbench before it reloads.
    await wb.page.waitForTimeout(1000);

    const navigated = wb.page.waitForEvent('framenavigated', { predicate: (fr) => fr === wb.page.mainFrame(), timeout: 60_000 });
    await h.runCommand(wb.page, 'Developer: Reload Window');
    await navigated;
    await wb.page.locator('div.monaco-workbench').waitFor({ state: 'visible', timeout: 60_000 });
    await expectRestoredAsBefore(wb, before);
  }, 300_000);

  it('the demo panel comes back with its data and state after the extension host restarts', async () => {
    const f = panel(wb.page);
    const before = await panelState(f);
    expect(before.worst).toBe('1');
    // A mark in the panel's document: the restart must give the panel a new document (revived by the serializer).
    await f.locator('body').evaluate((b) => b.setAttribute('data-before-restart', '1'));
    // code-server (VS Code for the web) has no "Developer: Restart Extension Host" command; its remote extension host
    // is restarted by the workbench when the process ends, so the test ends that process (a child of its own
    // code-server, found by its parent chain) and the workbench starts a new one.
    const pids = extensionHostPids(wb.codeServer.child.pid ?? -1);
    expect(pids.length, 'extension host processes of this code-server').toBeGreaterThan(0);
    for (const pid of pids) process.kill(pid, 'SIGKILL');
    await expect.poll(() => panel(wb.page).locator('body[data-before-restart]').count().catch(() => 1), { timeout: 60_000 }).toBe(0);
    await expectRestoredAsBefore(wb, before);
    await wb.page.screenshot({ path: path.join(SCREENSHOT_DIR, 'workbench-after-restart.png') });
  }, 300_000);
  it('two logs with the same name in different folders each come back with their own log after the extension host restarts', async () => {
    await h.runCommand(wb.page, 'View: Close All Editors');
    // The whole demo log in one folder, its first 60% in the other: the epoch counts tell the readings apart too.
    const logs = { 'same-a': path.join(wb.workspace, 'same-a', 'flight.csv'), 'same-b': path.join(wb.workspace, 'same-b', 'flight.csv') };
    mkdirSync(path.dirname(logs['same-a']), { recursive: true });
    mkdirSync(path.dirname(logs['same-b']), { recursive: true });
    writeFileSync(logs['same-a'], lines.join(''));
    writeFileSync(logs['same-b'], head);
    const tabOf = (folder: string) => wb.page.locator('.tabs-container .tab').filter({ hasText: `Residuum: flight.csv (${folder})` });
    /** The visible panels: the log each shows (main#app data-uri), its epochs, and whether it has the test's mark. */
    const visiblePanels = async (): Promise<{ uri: string; epochs: number; marked: boolean }[]> => {
      const frames = wb.page.locator('iframe.webview.ready').filter({ visible: true });
      const out: { uri: string; epochs: number; marked: boolean }[] = [];
      for (let i = 0; i < (await frames.count()); i++) {
        const doc = frames.nth(i).contentFrame().locator('#active-frame').contentFrame();
        const facts = await doc.locator('main#app[data-state="ready"]').evaluate((el) => ({ ...(el as unknown as { dataset: Record<string, string> }).dataset }), undefined, { timeout: 1000 }).catch(() => undefined);
        const marked = (await doc.locator('body[data-before-restart]').count().catch(() => 0)) > 0;
        if (facts?.uri) out.push({ uri: decodeURIComponent(facts.uri), epochs: Number(facts.epochs), marked });
      }
      return out;
    };
    /** Shows the tab of `folder`'s panel and waits for a visible, unmarked panel showing that log; its epochs. */
    const epochsShown = async (folder: string): Promise<number> => {
      await tabOf(folder).first().click();
      const suffix = `/${folder}/flight.csv`;
      let shown: { uri: string; epochs: number; marked: boolean } | undefined;
      let seen: { uri: string; epochs: number; marked: boolean }[] = [];
      try {
        await expect.poll(async () => {
          seen = await visiblePanels();
          shown = seen.find((p) => p.uri.endsWith(suffix) && !p.marked && p.epochs > 0);
          return shown !== undefined;
        }, { timeout: 120_000, message: `a panel showing ${folder}/flight.csv` }).toBe(true);
      } catch (e) {
        // What the page showed instead, for the failure's message and a screenshot to look at.
        await wb.page.screenshot({ path: path.join(SCREENSHOT_DIR, `workbench-same-names-${folder}-missing.png`) }).catch(() => undefined);
        const tabs = await wb.page.locator('.tabs-container .tab').allInnerTexts().catch(() => []);
        throw new Error(`${e instanceof Error ? e.message : String(e)}; panels seen: ${JSON.stringify(seen)}; tabs: ${JSON.stringify(tabs)}`);
      }
      return shown?.epochs ?? NaN;
    };
    await h.openLogViaDialog(wb.page, logs['same-a']);
    await h.openLogViaDialog(wb.page, logs['same-b']);
    // Both tabs carry their folder once the second log with that name is open.
    await expect.poll(async () => (await tabOf('same-a').count()) + (await tabOf('same-b').count()), { timeout: 60_000 }).toBe(2);
    const before = { a: await epochsShown('same-a'), b: await epochsShown('same-b') };
    expect(before.a).toBeGreaterThan(before.b);
    // The kept panels reach the workspace state (debounced) before the restart; then every panel page is marked.
    await wb.page.waitForTimeout(1500);
    const frames = wb.page.locator('iframe.webview.ready');
    for (let i = 0; i < (await frames.count()); i++) {
      await frames.nth(i).contentFrame().locator('#active-frame').contentFrame().locator('body').evaluate((b) => b.setAttribute('data-before-restart', '1'), undefined, { timeout: 2000 }).catch(() => undefined);
    }
    const pids = extensionHostPids(wb.codeServer.child.pid ?? -1);
    expect(pids.length, 'extension host processes of this code-server').toBeGreaterThan(0);
    for (const pid of pids) process.kill(pid, 'SIGKILL');
    // Each tab comes back with its own log (the shown one at once, a hidden one when it is shown), titles unchanged.
    expect(await epochsShown('same-b')).toBe(before.b);
    expect(await epochsShown('same-a')).toBe(before.a);
    expect(await tabOf('same-a').count()).toBe(1);
    expect(await tabOf('same-b').count()).toBe(1);
    expect(webviewCspViolations(wb).map((m) => m.text)).toEqual([]);
    await wb.page.screenshot({ path: path.join(SCREENSHOT_DIR, 'workbench-same-names-after-restart.png') });
  }, 420_000);
});

/**
 * End-to-end, filter resets: Residuum packaged as a .vsix in a real VS Code (code-server + headless chromium, the
 * harness of scripts/e2e/harness.mjs). The log is a seeded Kalman-filter run of our own with a re-initialisation at
 * 60 s (test/core/resets/simKf.ts), written into a scratch copy of the demo workspace.
 *
 * - The panel lists the covariance jump as a finding with "Treat as reset"; pressing it writes a reset note into
 *   `<log>.notes.json` at the candidate's time, the analysis re-runs and the panel shows two segments.
 * - "Undo reset" deletes the note and the panel is back to one segment with the candidate.
 *
 * Tools as in editor.e2e.test.ts: the test FAILS with the reason when code-server or chromium cannot be had.
 * RESIDUUM_E2E_VSIX reuses a prebuilt .vsix (dev only).
 */
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type { FrameLocator, Page } from 'playwright-core';
import * as h from '../../scripts/e2e/harness.mjs';
import { kfCsv, simulateKf } from '../core/resets/simKf';

const ROOT = h.ROOT;
const RUN_DIR = path.join(h.TOOLS_DIR, 'runs', 'resets-e2e');
const SCREENSHOT_DIR = path.join(ROOT, 'test-output', 'screenshots');
const DEMO_WORKSPACE = path.join(ROOT, 'demo', 'workspace');

let codeServer: h.CodeServer | undefined;
let browser: { close(): Promise<void> } | undefined;
let page: Page;
let logPath = '';

function panel(): FrameLocator {
  return page.locator('iframe.webview.ready').filter({ visible: true }).last().contentFrame().locator('#active-frame').contentFrame();
}

function resetNotes(): { t: number; reset?: boolean }[] {
  try {
    const file = JSON.parse(readFileSync(`${logPath}.notes.json`, 'utf8')) as { notes: { t: number; reset?: boolean }[] };
    return file.notes.filter((n) => n.reset === true);
  } catch {
    return [];
  }
}

describe('filter resets in a real VS Code', () => {
  beforeAll(async () => {
    const tools = h.ensureTools();
    const vsix = process.env.RESIDUUM_E2E_VSIX ?? h.buildAndPackage(path.join(RUN_DIR, 'residuum.vsix')).vsix;
    const profile = h.createProfile(path.join(RUN_DIR, 'profile'));
    h.installExtension(tools.codeServerBin, profile, vsix);
    const workspace = h.scratchCopy(DEMO_WORKSPACE, 'resets-e2e-workspace');
    logPath = path.join(workspace, 'kf-restart.csv');
    writeFileSync(logPath, kfCsv(simulateKf({ seed: 7, resetAt_s: 60 })));
    rmSync(`${logPath}.notes.json`, { force: true });
    mkdirSync(SCREENSHOT_DIR, { recursive: true });
    codeServer = await h.startCodeServer({ codeServerBin: tools.codeServerBin, profile, workspace });
    const b = await h.launchBrowser(tools.chromium);
    browser = b;
    page = b.context.pages()[0] ?? (await b.context.newPage());
    await h.openWorkbench(page, codeServer.workbenchUrl);
    await h.runCommand(page, 'View: Close Primary Side Bar');
  }, 900_000);

  afterEach(async (ctx) => {
    if (ctx.task.result?.state !== 'fail' || !page || page.isClosed()) return;
    const name = ctx.task.name.replace(/[^a-z0-9]+/gi, '-').slice(0, 60);
    await page.screenshot({ path: path.join(SCREENSHOT_DIR, `failure-resets-${name}.png`) }).catch(() => undefined);
  });

  afterAll(async () => {
    await browser?.close();
    await codeServer?.stop();
  });

  it('Treat as reset: the sidecar holds the reset and the panel shows two segments; Undo reset joins them again', async () => {
    await h.openLogViaDialog(page, logPath);
    const f = panel();
    await f.locator('main#app[data-state="ready"]').waitFor({ state: 'attached', timeout: 120_000 });
    const section = f.locator('[data-testid="resets"]');
    await section.waitFor({ state: 'attached', timeout: 30_000 });
    expect(await section.getAttribute('data-segments')).toBe('1');

    // The candidate finding carries the action; its time is the re-initialisation epoch (t = 60 s, line 602).
    const confirm = f.locator('[data-testid="findings-list"] [data-testid="reset-confirm"]');
    expect(await confirm.count()).toBe(1);
    expect(Number(await confirm.getAttribute('data-t'))).toBe(60);
    await confirm.click();

    await expect.poll(() => resetNotes().map((n) => n.t), { timeout: 30_000 }).toEqual([60]);
    await f.locator('[data-testid="resets"][data-segments="2"]').waitFor({ state: 'attached', timeout: 120_000 });
    const starts = await f.locator('[data-testid="segments"] li').evaluateAll((els) => els.map((e) => [e.getAttribute('data-t'), e.getAttribute('data-start')]));
    expect(starts).toEqual([['0', 'log'], ['60', 'confirmed']]);
    // each segment with its own convergence and consistency figures
    for (const text of await f.locator('[data-testid="segments"] li').allTextContents()) {
      expect(text).toMatch(/position settles in [0-9.]+ s \(rate [0-9.e-]+\/s\), NEES [0-9.]+/);
      expect(text).toMatch(/pos NIS [0-9.]+ \(3 dof\)/);
    }
    expect(await f.locator('[data-testid="findings-list"] [data-testid="reset-confirm"]').count()).toBe(0);
    await page.screenshot({ path: path.join(SCREENSHOT_DIR, 'resets-two-segments.png') });

    await f.locator('[data-testid="segments"] [data-testid="reset-unconfirm"]').click();
    await expect.poll(() => resetNotes().length, { timeout: 30_000 }).toBe(0);
    await f.locator('[data-testid="resets"][data-segments="1"]').waitFor({ state: 'attached', timeout: 120_000 });
    expect(await f.locator('[data-testid="findings-list"] [data-testid="reset-confirm"]').count()).toBe(1);
  }, 400_000);
});

/**
 * End-to-end: the report export, the compare view and the Monte Carlo view of the analysis panel in a real VS Code
 * (code-server 4.100.3 + Debian's chromium through playwright-core, set up by test/e2e/workbench.ts; recipe:
 * ../shared/vscode-conventions.md sec 5(c)),
 * driven through the real UI: the panel's buttons, VS Code's simple file dialogs (code-server has no native ones:
 * the dialog is a quick input holding a path), the command palette.
 *
 * The runs are seeded runs of our own warehouse scenario (core/demo), written to a scratch workspace at the start:
 * `degraded.csv` (the scenario's documented faults injected) and `clean.csv` (same seed, no faults) for the
 * export and the comparison; `mc/` with three consistent runs (seeds 1..3) for the Monte Carlo check.
 *
 * Checks, in one code-server session (the steps share the page, so they run in order):
 * - "Export report..." and "Markdown summary..." in the panel write files (save dialog answered with a path) that
 *   carry the log's SHA-256 and its findings;
 * - "Add runs..." in the Compare view (open dialog) shows both runs' figures, the common span, the better run, and
 *   overlay charts with both runs' data; the comparison's Markdown export carries both hashes; another alignment
 *   is applied; "Residuum: Compare Runs..." from the explorer's context menu on two selected logs opens the view;
 * - "Residuum: Monte Carlo Consistency of Runs..." on the folder shows the N-run averages with their band and data;
 * - no Content Security Policy violation is logged by our webview (and a refused inline script is seen).
 *
 * Tools: scripts/tools.mjs installs code-server into .tools/ on first use; when it cannot, the test FAILS with the
 * reason. Wall time after the tools are installed: about 2 minutes.
 */
import { describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type { FrameLocator, Page } from 'playwright-core';
import * as h from '../../scripts/e2e/harness.mjs';
import * as probes from '../../scripts/e2e/probes.mjs';
import { generateWarehouseLog, type WarehouseOptions } from '../../extension/core/demo/warehouse';
import { analyzeFile } from '../../extension/node/analyzeFile';
import { SCREENSHOT_DIR, openLogInPanel, panel, showTab, useWorkbench, waitForFile, webviewCspViolations } from './workbench';

let degraded = '';
let clean = '';
let mcFolder = '';

function writeRun(file: string, options: WarehouseOptions): void {
  mkdirSync(path.dirname(file), { recursive: true });
  writeFileSync(file, [...generateWarehouseLog({ duration_s: 20, ...options })].join(''));
}

/** Clicks a toolkit button of the panel by its text and answers the file dialog it opens with `file`. */
async function clickAndAnswer(page: Page, f: FrameLocator, text: string, file: string): Promise<void> {
  await h.retryOnPage(
    page,
    3,
    async () => {
      await f.locator('vscode-button').filter({ hasText: text }).first().click();
      await h.answerFileDialog(page, file);
    },
    (last) => `"${text}" then the dialog with ${file}: ${last}`,
  );
}

/**
 * Answers the simple dialog of a folder choice: the folder's path with a trailing slash moves the dialog into it
 * (its list then shows `..`), and the dialog's OK button (`okLabel`) accepts the folder shown.
 */
async function answerFolderDialog(page: Page, folder: string, okLabel: string): Promise<void> {
  const widget = page.locator('.quick-input-widget');
  const input = widget.locator('input.input');
  await input.waitFor({ state: 'visible', timeout: 15_000 });
  await expect.poll(() => input.inputValue(), { timeout: 10_000 }).toMatch(/^\//);
  const typed = `${folder}/`;
  await h.fillAndHold(page, input, typed);
  await widget.locator('.monaco-list-row').filter({ hasText: '..' }).first().waitFor({ state: 'visible', timeout: 10_000 });
  await widget.locator('.monaco-button').filter({ hasText: okLabel }).first().click();
  await widget.waitFor({ state: 'hidden', timeout: 10_000 });
}

/** Canvases of a chart section with something drawn. */
async function drawnIn(f: FrameLocator, selector: string): Promise<number> {
  return f.locator(`${selector} canvas`).evaluateAll(probes.countDrawnCanvases);
}

describe('Residuum export, compare and Monte Carlo in a real VS Code', () => {
  const wb = useWorkbench(
    'compare',
    (runDir) => {
      const workspace = path.join(runDir, 'workspace');
      rmSync(workspace, { recursive: true, force: true });
      degraded = path.join(workspace, 'degraded.csv');
      clean = path.join(workspace, 'clean.csv');
      mcFolder = path.join(workspace, 'mc');
      writeRun(degraded, { seed: 1, faults: true });
      writeRun(clean, { seed: 1, faults: false });
      for (const seed of [1, 2, 3]) writeRun(path.join(mcFolder, `run${seed}.csv`), { seed, faults: false });
      return { workspace };
    },
    { runDir: 'e2e-compare' },
  );

  it('exports the HTML report and the Markdown summary from the panel, with the log hash and findings', async () => {
    const f = await openLogInPanel(wb.page, degraded, 90_000);
    const htmlFile = path.join(wb.workspace, 'exported-report.html');
    const mdFile = path.join(wb.workspace, 'exported-summary.md');
    await clickAndAnswer(wb.page, f, 'Export report...', htmlFile);
    expect(await waitForFile(htmlFile, 30_000), `${htmlFile} written`).toBe(true);
    await clickAndAnswer(wb.page, panel(wb.page), 'Markdown summary...', mdFile);
    expect(await waitForFile(mdFile, 30_000), `${mdFile} written`).toBe(true);

    // The hash the files must carry: node:crypto over the log; the findings: the same analysis run here.
    const sha = createHash('sha256').update(readFileSync(degraded)).digest('hex');
    const { report } = await analyzeFile(degraded);
    expect(report.findings.length, 'the degraded run has findings').toBeGreaterThan(0);
    const kinds = [...new Set(report.findings.map((x) => x.kind))];
    const html = readFileSync(htmlFile, 'utf8');
    expect(html.startsWith('<!DOCTYPE html>') || html.startsWith('<!doctype html>'), 'a whole HTML document').toBe(true);
    expect(html).toContain(sha);
    expect(html).toContain('degraded.csv');
    for (const k of kinds) expect(html, `finding kind ${k} in the HTML`).toContain(k);
    const md = readFileSync(mdFile, 'utf8');
    expect(md).toContain(sha);
    expect(md).toContain(`Findings: ${report.findings.length}`);
    for (const k of kinds) expect(md, `finding kind ${k} in the Markdown`).toContain(k);
  }, 240_000);

  it('compares the panel log with a run added in its Compare view: figures side by side and overlays', async () => {
    const f = panel(wb.page);
    await showTab(f, /^\s*Compare/);
    await expect.poll(() => f.locator('[data-testid="compare-view"]').getAttribute('data-state'), { timeout: 10_000 }).toBe('empty');
    await clickAndAnswer(wb.page, f, 'Add runs...', clean);
    const view = f.locator('[data-testid="compare-view"][data-state="ready"]');
    await view.waitFor({ state: 'attached', timeout: 90_000 });

    const runs = await f.locator('[data-testid="compare-runs"] tbody tr').evaluateAll((rows) => rows.map((r) => [...r.querySelectorAll('td')].slice(0, 2).map((c) => c.textContent ?? '')));
    expect(runs).toEqual([['A', 'degraded.csv'], ['B', 'clean.csv']]);
    expect(await f.locator('[data-testid="compare-span"]').textContent()).toMatch(/^Figures on the common span 0 s to 19\.99 s/);
    // The TDOA channel's table: both runs' values, the difference, and the clean run (B) better on outliers.
    const tdoa = f.locator('table[data-testid="compare-figures"][data-group="tdoa"]');
    const outliers = await tdoa.locator('tbody tr').filter({ hasText: /^outliers/ }).first().locator('td').allTextContents();
    // Figure, A, B, B − A, Better, Rule
    expect(outliers.length).toBe(6);
    const [a, b] = [Number(outliers[1]), Number(outliers[2])];
    expect(a, `degraded outliers ${outliers[1]} vs clean ${outliers[2]}`).toBeGreaterThan(b);
    expect(outliers[3]).toBe(`−${a - b}`);
    expect(outliers[4]).toBe('B');
    expect(await f.locator('table[data-testid="compare-figures"][data-group="position"]').count()).toBe(1);

    const overlays = f.locator('section.chart[data-series^="overlay/"]');
    expect(await overlays.count()).toBeGreaterThan(0);
    const info = await overlays.evaluateAll((els) => els.map((e) => [e.getAttribute('data-series'), Number(e.getAttribute('data-points')), Number(e.getAttribute('data-runs'))] as const));
    for (const [key, points, nRuns] of info) {
      expect(nRuns, `${key} runs`).toBe(2);
      expect(points, `${key} points`).toBeGreaterThan(100);
    }
    expect(await drawnIn(f, '[data-testid="compare-view"] section.chart[data-series="overlay/nisWindow/tdoa"]')).toBeGreaterThan(0);
    // The table equivalent of an overlay: one column per run.
    const nisSection = f.locator('section.chart[data-series="overlay/nisWindow/tdoa"]');
    await nisSection.locator('summary').click();
    expect(await nisSection.locator('thead th').count()).toBe(3);
    expect(await nisSection.locator('tbody tr').count()).toBeGreaterThan(10);
    await wb.page.screenshot({ path: path.join(SCREENSHOT_DIR, 'workbench-compare.png') });

    // The comparison's Markdown carries both runs' hashes; another alignment computes the figures again.
    const compareMd = path.join(wb.workspace, 'exported-comparison.md');
    await clickAndAnswer(wb.page, f, 'Comparison as Markdown...', compareMd);
    expect(await waitForFile(compareMd, 30_000), `${compareMd} written`).toBe(true);
    const cmd = readFileSync(compareMd, 'utf8');
    for (const file of [degraded, clean]) expect(cmd).toContain(createHash('sha256').update(readFileSync(file)).digest('hex'));
    await f.locator('select[data-testid="compare-align"]').selectOption('start');
    await expect.poll(() => f.locator('[data-testid="compare-span"]').textContent(), { timeout: 60_000 }).toMatch(/aligned by each run’s start\)\.$/);
    expect(await f.locator('[data-testid="compare-view"]').getAttribute('data-state')).toBe('ready');
  }, 240_000);

  it('opens the compare view from the explorer: two logs selected, Residuum: Compare Runs... in the context menu', async () => {
    await h.runCommand(wb.page, 'View: Close All Editors');
    await h.runCommand(wb.page, 'View: Show Explorer');
    const rows = wb.page.locator('.explorer-folders-view .monaco-list-row');
    const row = (name: string) => rows.filter({ has: wb.page.locator('.label-name', { hasText: new RegExp(`^${name.replace('.', '\\.')}$`) }) }).first();
    await row('clean.csv').waitFor({ state: 'visible', timeout: 15_000 });
    const selected = wb.page.locator('.explorer-folders-view .monaco-list-row.selected');
    // Clicking a log opens it in a preview editor, which may take the focus back a moment later: select again until
    // both rows are selected.
    for (let attempt = 0; attempt < 4 && (await selected.count()) !== 2; attempt++) {
      await row('clean.csv').click();
      await expect.poll(() => row('clean.csv').getAttribute('class'), { timeout: 5000 }).toMatch(/\bselected\b/);
      await wb.page.waitForTimeout(500 * (attempt + 1));
      await row('degraded.csv').click({ modifiers: ['Control'] });
      await expect.poll(() => selected.count(), { timeout: 3000 }).toBe(2).catch(() => undefined);
    }
    expect(await selected.count(), 'rows selected in the explorer').toBe(2);
    await row('degraded.csv').click({ button: 'right' });
    const item = wb.page.locator('.monaco-menu .action-item').filter({ hasText: 'Residuum: Compare Runs...' }).first();
    await item.waitFor({ state: 'visible', timeout: 10_000 });
    // The workbench's context menu ignores a click that comes too soon after it opened (it guards against the release
    // of the right button choosing an item): click again while the menu is still open.
    const menu = wb.page.locator('.monaco-menu').first();
    for (let attempt = 0; attempt < 4; attempt++) {
      await item.click().catch(() => undefined);
      const closed = await menu.waitFor({ state: 'hidden', timeout: 2000 }).then(() => true, () => false);
      if (closed) break;
    }
    expect(await menu.isVisible().catch(() => false), 'the context menu closed on "Residuum: Compare Runs..."').toBe(false);
    const f = panel(wb.page);
    const view = f.locator('[data-testid="compare-view"][data-state="ready"]');
    await view.waitFor({ state: 'attached', timeout: 90_000 });
    // The compare view is shown (its tab selected) and holds both selected logs.
    expect(await view.isVisible()).toBe(true);
    const names = await f.locator('[data-testid="compare-runs"] tbody tr td:nth-child(2)').allTextContents();
    expect([...names].sort()).toEqual(['clean.csv', 'degraded.csv']);
    expect(await f.locator('table[data-testid="compare-figures"]').count()).toBeGreaterThan(0);
    await h.runCommand(wb.page, 'View: Close Primary Side Bar');
  }, 180_000);

  it('shows the Monte Carlo view of a folder of runs: N-run averages with their band', async () => {
    await h.runCommand(wb.page, 'Residuum: Monte Carlo Consistency of Runs...', { opensQuickInput: true });
    const widget = wb.page.locator('.quick-input-widget');
    await widget.locator('.monaco-list-row').filter({ hasText: 'A folder of runs' }).first().click();
    await answerFolderDialog(wb.page, mcFolder, 'Check runs');
    const f = panel(wb.page);
    const view = f.locator('[data-testid="montecarlo-view"][data-state="ready"]');
    await view.waitFor({ state: 'attached', timeout: 120_000 });
    expect(await view.locator('code').allTextContents()).toEqual(['run1.csv', 'run2.csv', 'run3.csv']);
    const summary = await f.locator('table[data-testid="montecarlo-summary"] tbody tr').evaluateAll((rows) => rows.map((r) => [...r.querySelectorAll('td')].map((c) => c.textContent ?? '')));
    const position = summary.find((r) => r[0] === 'NEES position');
    expect(position, `summary rows ${JSON.stringify(summary)}`).toBeDefined();
    // Source: reference-checks.md sec 1 (df 9: 2.700389, 19.022768) over N = 3 runs: chi2(N n)/N of sec 2.2.
    expect(position![5]).toBe(`${(2.700389 / 3).toPrecision(4)} – ${(19.022768 / 3).toPrecision(4)}`);
    expect(position![4]).toMatch(/^\d+\.\d%$/);
    const charts = await f.locator('[data-testid="montecarlo-view"] section.chart[data-band="1"]').evaluateAll((els) => els.map((e) => [e.getAttribute('data-series'), Number(e.getAttribute('data-points'))] as const));
    expect(charts.map(([k]) => k)).toContain('montecarlo/nees/position');
    expect(charts.map(([k]) => k)).toContain('montecarlo/nis/tdoa');
    for (const [key, points] of charts) expect(points, `${key} points`).toBeGreaterThan(100);
    expect(await drawnIn(f, '[data-testid="montecarlo-view"] section.chart[data-series="montecarlo/nees/position"]')).toBeGreaterThan(0);
    await wb.page.screenshot({ path: path.join(SCREENSHOT_DIR, 'workbench-montecarlo.png') });
  }, 240_000);

  it('logs no Content Security Policy violation from the panel (and would see one)', async () => {
    expect(webviewCspViolations(wb).map((m) => m.text)).toEqual([]);
    const ran = await panel(wb.page).locator('body').evaluate(probes.injectInlineScript);
    expect(ran, 'an inline script ran inside the panel: the CSP is not strict').toBeNull();
    await expect.poll(() => webviewCspViolations(wb).length, { timeout: 10_000 }).toBeGreaterThan(0);
    expect(wb.pageErrors.filter((e) => /residuum|webview\.js/i.test(e))).toEqual([]);
  }, 60_000);
});

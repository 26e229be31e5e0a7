/**
 * End-to-end, filter resets: Residuum packaged as a .vsix in a real VS Code (code-server + headless chromium, the
 * shared set-up of test/e2e/workbench.ts over scripts/e2e/harness.mjs). The log is a seeded Kalman-filter run of
 * our own with a re-initialisation at 60 s (test/core/resets/simKf.ts), written into a scratch copy of the demo
 * workspace.
 *
 * - The panel lists the covariance jump as a finding with "Treat as reset"; pressing it writes a reset note into
 *   `<log>.notes.json` at the candidate's time, the analysis re-runs and the panel shows two segments.
 * - "Undo reset" deletes the note and the panel is back to one segment with the candidate.
 *
 * Tools as in editor.e2e.test.ts: the test FAILS with the reason when code-server or chromium cannot be had.
 * RESIDUUM_E2E_VSIX reuses a prebuilt .vsix (dev only).
 */
import { describe, expect, it } from 'vitest';
import { rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import * as h from '../../scripts/e2e/harness.mjs';
import { kfCsv, simulateKf } from '../core/resets/simKf';
import { SCREENSHOT_DIR, openLogInPanel, readNotesSidecar, useWorkbench, type SidecarNote } from './workbench';

const ROOT = h.ROOT;
const DEMO_WORKSPACE = path.join(ROOT, 'demo', 'workspace');

let logPath = '';

/** The reset notes of the log's sidecar (none while there is no sidecar). */
function resetNotes(): SidecarNote[] {
  return (readNotesSidecar(logPath)?.notes ?? []).filter((n) => n.reset === true);
}

describe('filter resets in a real VS Code', () => {
  const wb = useWorkbench('resets', () => {
    const workspace = h.scratchCopy(DEMO_WORKSPACE, 'resets-e2e-workspace');
    logPath = path.join(workspace, 'kf-restart.csv');
    writeFileSync(logPath, kfCsv(simulateKf({ seed: 7, resetAt_s: 60 })));
    rmSync(`${logPath}.notes.json`, { force: true });
    return { workspace };
  });

  it('Treat as reset: the sidecar holds the reset and the panel shows two segments; Undo reset joins them again', async () => {
    const f = await openLogInPanel(wb.page, logPath, 120_000);
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
    await wb.page.screenshot({ path: path.join(SCREENSHOT_DIR, 'resets-two-segments.png') });

    await f.locator('[data-testid="segments"] [data-testid="reset-unconfirm"]').click();
    await expect.poll(() => resetNotes().length, { timeout: 30_000 }).toBe(0);
    await f.locator('[data-testid="resets"][data-segments="1"]').waitFor({ state: 'attached', timeout: 120_000 });
    expect(await f.locator('[data-testid="findings-list"] [data-testid="reset-confirm"]').count()).toBe(1);
  }, 400_000);
});

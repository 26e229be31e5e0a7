/**
 * The exported reports: the HTML passes html-validate (a maintained npm HTML validator, its recommended rules) and
 * renders in headless Chromium (Debian's, driven by playwright-core) with every chart drawn and nothing run or
 * loaded; a screenshot is saved under test-output/report/. Markup in a log (column names, ids, metadata, notes,
 * the file name) shows as text in both HTML and Markdown. Logs: our own demo generator and the hostile log of the
 * editor tests (invented data).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, writeFileSync, mkdirSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { pathToFileURL } from 'node:url';
import { HtmlValidate } from 'html-validate';
import { chromium, type Browser } from 'playwright-core';
import { generateWarehouseLog } from '../../../extension/core/demo/warehouse';
import { analyzeFile, type FileAnalysis } from '../../../extension/node/analyzeFile';
import { resolveSettings } from '../../../extension/core/settings';
import { compareRuns, type Comparison } from '../../../extension/core/compareRuns';
import { renderReportHtml, renderComparisonHtml, REPORT_CSP } from '../../../extension/core/export/html';
import { renderReportMarkdown, renderComparisonMarkdown } from '../../../extension/core/export/markdown';
import { reportCharts } from '../../../extension/core/export/figures';
import { escapeHtml, escapeMarkdown } from '../../../extension/core/export/escape';
import { niceTicks } from '../../../extension/core/export/svg';
import { serializeNotes, type Note } from '../../../extension/core/notes/sidecar';
import { hostileCsv, HOSTILE_PAYLOADS, HOSTILE_CHANNEL } from '../../e2e/hostileLog';
import { reportProblems } from '../../helpers/reportSchema';

const root = path.resolve(__dirname, '../../..');
const outDir = path.join(root, 'test-output/report');
const CHROMIUM = '/usr/bin/chromium';
const dir = mkdtempSync(path.join(tmpdir(), 'residuum-export-'));
const validator = new HtmlValidate({ extends: ['html-validate:recommended'] });

const hostileNote: Note = {
  id: 'n1', t: 1.5, channel: HOSTILE_CHANNEL, text: `look ${HOSTILE_PAYLOADS.script} [x](javascript:alert(1)) **bold** | cell`, tags: ['<b>tag</b>'], status: 'open',
};

let demo: FileAnalysis;
let hostile: FileAnalysis;
let comparison: Comparison;

async function validate(html: string): Promise<string[]> {
  const report = await validator.validateString(html);
  return report.results.flatMap((r) => r.messages.map((m) => `${m.line}:${m.column} ${m.ruleId}: ${m.message}`));
}

beforeAll(async () => {
  mkdirSync(outDir, { recursive: true });
  const demoFile = path.join(dir, 'flight.csv');
  writeFileSync(demoFile, [...generateWarehouseLog({ duration_s: 30, seed: 12, imuRate_hz: 20 })].join(''));
  writeFileSync(`${demoFile}.notes.json`, serializeNotes([{ id: 'n0', t: 12, text: 'yaw wobble after the rack', tags: ['tuning'], status: 'open' }]));
  demo = await analyzeFile(demoFile);
  expect(demo.report.notes).toHaveLength(1);
  const hostileFile = path.join(dir, 'run<script>x<script>.csv');
  writeFileSync(hostileFile, hostileCsv(300));
  writeFileSync(`${hostileFile}.notes.json`, serializeNotes([hostileNote]));
  hostile = await analyzeFile(hostileFile);
  expect(hostile.report.notes).toHaveLength(1);
  const cleanFile = path.join(dir, 'clean.csv');
  writeFileSync(cleanFile, [...generateWarehouseLog({ duration_s: 25, seed: 12, rate_hz: 50, faults: false, imuRate_hz: 20 })].join(''));
  const clean = await analyzeFile(cleanFile);
  const c = compareRuns([clean, demo], [resolveSettings(), resolveSettings()], { by: 'start' });
  if (!c.ok) throw new Error(c.message);
  comparison = c.comparison;
  for (const r of [demo.report, hostile.report, clean.report, ...comparison.reports]) expect(reportProblems(r)).toEqual([]);
}, 120_000);

describe('escaping', () => {
  it('HTML: the five specials become character references', () => {
    expect(escapeHtml(`<a href="x" title='y'>&</a>`)).toBe('&#60;a href=&#34;x&#34; title=&#39;y&#39;&#62;&#38;&#60;/a&#62;');
  });
  it('Markdown: no tag, link, emphasis, table cell, heading or list forms', () => {
    expect(escapeMarkdown('<img src=x>')).toBe('&lt;img src=x&gt;');
    expect(escapeMarkdown('[x](javascript:alert(1))')).toBe('\\[x\\]\\(javascript&#58;alert\\(1\\)\\)');
    expect(escapeMarkdown('**b** _i_ a|b')).toBe('\\*\\*b\\*\\* \\_i\\_ a\\|b');
    expect(escapeMarkdown('# h')).toBe('\\# h');
    expect(escapeMarkdown('- item')).toBe('\\- item');
    expect(escapeMarkdown('12. item')).toBe('12\\. item');
    expect(escapeMarkdown('0.5 - 1.5')).toBe('0.5 - 1.5');
    expect(escapeMarkdown('two\nlines')).toBe('two lines');
  });
  it('ticks are round numbers covering the range', () => {
    expect(niceTicks(0, 10, 5)).toEqual([0, 2, 4, 6, 8, 10]);
    expect(niceTicks(-0.3, 0.7, 5)).toEqual([-0.2, 0, 0.2, 0.4, 0.6].map((v) => expect.closeTo(v, 12)));
  });
});

describe('content', () => {
  it('HTML and Markdown carry the version, the file name and hash, the notes, the findings and the figures', () => {
    const html = renderReportHtml(demo.report, demo.series);
    const md = renderReportMarkdown(demo.report);
    const r = demo.report;
    expect(r.findings.length).toBeGreaterThan(0);
    for (const text of [html, md]) {
      expect(text).toContain('Residuum 0');
      expect(text).toContain('flight');
      expect(text).toContain(r.source.sha256!);
      expect(text).toContain('yaw wobble after the rack');
      expect(text).toContain(text === md ? escapeMarkdown(`Findings (${r.findings.length})`) : `Findings (${r.findings.length})`);
      expect(text).toContain(`${(100 * r.channels[0].nis.inside95!).toFixed(1)}%`);
      expect(text).toContain(r.findings[0].kind === 'outlier' ? 'outlier' : r.findings[0].kind);
    }
    expect(html).toContain(`content="${escapeHtml(REPORT_CSP)}"`);
  });
  it('the comparison states the common span and carries both hashes', () => {
    const md = renderComparisonMarkdown(comparison);
    const html = renderComparisonHtml(comparison);
    for (const text of [md, html]) {
      expect(text).toContain('common span 0 .. 24.980 s');
      for (const run of comparison.runs) expect(text).toContain(run.sha256!);
    }
  });
});

describe('HTML validity', () => {
  it('the report of the demo run is valid HTML', async () => {
    expect(await validate(renderReportHtml(demo.report, demo.series))).toEqual([]);
  });
  it('the report of the hostile log is valid HTML', async () => {
    expect(await validate(renderReportHtml(hostile.report, hostile.series))).toEqual([]);
  });
  it('the comparison is valid HTML', async () => {
    expect(await validate(renderComparisonHtml(comparison))).toEqual([]);
  });
  it('the validator does catch a broken page (the check can fail)', async () => {
    const broken = renderReportHtml(demo.report, demo.series).replace('</table>', '</tabel>');
    expect((await validate(broken)).length).toBeGreaterThan(0);
  });
});

describe('Markdown of a hostile log', () => {
  it('every payload shows as text: no raw tag, no link, no scheme', () => {
    const md = renderReportMarkdown(hostile.report);
    expect(md).not.toMatch(/</);
    expect(md).not.toMatch(/\]\(/);
    expect(md).not.toMatch(/javascript:/i);
    expect(md).toContain('&lt;script&gt;');
    expect(md).toContain('\\*\\*bold\\*\\*');
    expect(md).toContain('tdoa&lt;img src=x onerror=window.\\_\\_pwned=');
    expect(md).toContain('run&lt;script&gt;x&lt;script&gt;.csv');
  });
});

describe.skipIf(!existsSync(CHROMIUM))('headless Chromium', () => {
  let browser: Browser;
  beforeAll(async () => {
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      headless: true,
      args: ['--no-sandbox', '--disable-gpu', '--disable-dev-shm-usage', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'],
    });
  }, 60_000);
  afterAll(async () => {
    await browser?.close();
  });

  async function render(html: string, name: string, expectedCharts: number): Promise<void> {
    const file = path.join(dir, `${name}.html`);
    writeFileSync(file, html);
    const page = await browser.newPage({ viewport: { width: 1100, height: 900 } });
    const requests: string[] = [];
    page.on('request', (r) => requests.push(r.url()));
    await page.goto(pathToFileURL(file).href);
    // Browser-side probes as expressions (this test project has no DOM typings).
    const charts = (await page.evaluate(`Array.from(document.querySelectorAll('svg.chart')).map((svg) => {
      const box = svg.getBoundingClientRect();
      const paths = Array.from(svg.querySelectorAll('path.curve')).map((p) => p.getTotalLength());
      return { width: box.width, height: box.height, paths };
    })`)) as { width: number; height: number; paths: number[] }[];
    expect(charts).toHaveLength(expectedCharts);
    for (const c of charts) {
      expect(c.width).toBeGreaterThan(300);
      expect(c.height).toBeGreaterThan(100);
      expect(c.paths.length).toBeGreaterThan(0);
      for (const len of c.paths) expect(len).toBeGreaterThan(0);
    }
    expect(requests.filter((u) => !u.startsWith('file:'))).toEqual([]);
    expect(await page.evaluate('document.scripts.length')).toBe(0);
    await page.screenshot({ path: path.join(outDir, `${name}.png`), fullPage: true });
    await page.close();
  }

  it('the demo report renders with every chart drawn; screenshot saved', async () => {
    const charts = reportCharts(demo.series).length;
    expect(charts).toBeGreaterThanOrEqual(6);
    await render(renderReportHtml(demo.report, demo.series), 'report', charts);
    expect(existsSync(path.join(outDir, 'report.png'))).toBe(true);
  }, 60_000);

  it('the comparison renders with every overlay drawn; screenshot saved', async () => {
    expect(comparison.overlays.length).toBeGreaterThanOrEqual(3);
    await render(renderComparisonHtml(comparison), 'compare', comparison.overlays.length);
  }, 60_000);

  it('a hostile log: no element, handler or link from the log exists, and its text is shown', async () => {
    const file = path.join(dir, 'hostile.html');
    writeFileSync(file, renderReportHtml(hostile.report, hostile.series));
    const page = await browser.newPage();
    await page.goto(pathToFileURL(file).href);
    const probe = (await page.evaluate(`({
      pwned: window.__pwned,
      bad: document.querySelectorAll('script, img, a, iframe, object, embed, foreignObject').length,
      handlers: Array.from(document.querySelectorAll('*')).filter((e) => Array.from(e.attributes).some((a) => a.name.startsWith('on'))).length,
      text: document.body.innerText,
    })`)) as { pwned?: string; bad: number; handlers: number; text: string };
    expect(probe.pwned).toBeUndefined();
    expect(probe.bad).toBe(0);
    expect(probe.handlers).toBe(0);
    expect(probe.text).toContain(HOSTILE_CHANNEL);
    expect(probe.text).toContain('<script>window.__pwned="script"</script>');
    expect(probe.text).toContain('run<script>x<script>.csv');
    await page.close();
  }, 60_000);
});

// Drives the webview harness in headless Chromium: bundles fakeHost.ts, serves a page with the real CSP shape and
// dist/webview.js, checks the DOM hooks and that no CSP violation or page error occurs, and saves screenshots.
// Usage: node test/webview/harness/run.mjs [--n 200000 | --log demo/warehouse-flight.csv] [--theme dark|light|hc]
//        [--width 1100] (the page's width in CSS pixels: a narrow panel is, say, --width 460)
// (after node scripts/build.mjs)
import * as esbuild from 'esbuild';
import { createServer } from 'node:http';
import { readFileSync, mkdirSync } from 'node:fs';
import { chromium } from 'playwright-core';
import { ALIAS } from '../../../scripts/bench/bundle.mjs';

const arg = (name, d) => { const i = process.argv.indexOf(`--${name}`); return i > 0 ? process.argv[i + 1] : d; };
const n = arg('n', '200000');
const logPath = arg('log', '');
let real;
if (logPath) {
  // the module aliases of the real build (jsonc-parser's UMD main has lazy requires esbuild cannot follow)
  const built = await esbuild.build({ entryPoints: ['test/webview/harness/realHost.ts'], bundle: true, write: false, format: 'cjs', platform: 'node', target: 'node20', alias: ALIAS });
  const mod = { exports: {} };
  new Function('module', 'exports', 'require', built.outputFiles[0].text)(mod, mod.exports, (await import('node:module')).createRequire(import.meta.url));
  real = await mod.exports.realHost(logPath);
}
const themeKind = arg('theme', 'dark');
const widthPx = Number(arg('width', '1100'));
const out = widthPx === 1100 ? 'test-output/webview-harness' : `test-output/webview-harness-${widthPx}`;
mkdirSync(out, { recursive: true });
const fake = await esbuild.build({ entryPoints: ['test/webview/harness/fakeHost.ts'], bundle: true, write: false, format: 'iife', platform: 'browser' });
const themes = {
  dark: { cls: 'vscode-dark', bg: '#1e1e1e', fg: '#cccccc' },
  light: { cls: 'vscode-light', bg: '#ffffff', fg: '#333333' },
  hc: { cls: 'vscode-high-contrast', bg: '#000000', fg: '#ffffff' },
};
const th = themes[themeKind];
const nonce = 'harness0nonce';
const page = `<!DOCTYPE html><html><head>
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; img-src 'self' data:; style-src 'self' 'unsafe-inline'; font-src 'self'; script-src 'nonce-${nonce}'; connect-src 'self';">
<meta charset="UTF-8"><link rel="stylesheet" href="/uPlot.min.css"><link rel="stylesheet" href="/webview.css">
<style nonce="${nonce}">body{--vscode-editor-background:${th.bg};--vscode-editor-foreground:${th.fg};--vscode-charts-blue:#3794ff;--vscode-charts-red:#f14c4c;--vscode-charts-green:#89d185;--vscode-charts-orange:#d18616;--vscode-charts-purple:#b180d7;--vscode-charts-yellow:#cca700;--vscode-font-family:sans-serif;--vscode-font-size:13px}</style>
</head><body class="${th.cls}"><main id="app" data-state="loading"></main>
<script nonce="${nonce}" src="/fake.js"></script><script nonce="${nonce}" src="/webview.js"></script></body></html>`;
const files = { '/': ['text/html', page], '/fake.js': ['text/javascript', fake.outputFiles[0].text] };
for (const f of ['webview.js', 'webview.css', 'uPlot.min.css']) files[`/${f}`] = [f.endsWith('.js') ? 'text/javascript' : 'text/css', readFileSync(`dist/${f}`)];
const server = createServer((req, res) => {
  if (real && req.url === '/real/init') { res.writeHead(200, { 'content-type': 'application/json' }); res.end(JSON.stringify(real.init)); return; }
  if (real && req.url === '/real/series') {
    let body = '';
    req.on('data', (c) => (body += c));
    req.on('end', () => { res.writeHead(200, { 'content-type': 'application/json' }); res.end(JSON.stringify(real.answer(JSON.parse(body)))); });
    return;
  }
  const f = files[req.url.split('?')[0]];
  if (!f) { res.writeHead(req.url === '/favicon.ico' ? 204 : 404); res.end(); return; }
  res.writeHead(200, { 'content-type': f[0] });
  res.end(f[1]);
}).listen(0, '127.0.0.1');
await new Promise((r) => server.once('listening', r));
const url = `http://127.0.0.1:${server.address().port}/?n=${n}${real ? '&real=1' : ''}`;
const browser = await chromium.launch({ executablePath: '/usr/bin/chromium', headless: true, args: ['--no-sandbox', '--disable-gpu', '--disable-dev-shm-usage'] });
const problems = [];
try {
  const p = await browser.newPage({ viewport: { width: widthPx, height: 900 } });
  p.on('console', (m) => { if (m.type() === 'error' || /Content Security Policy/.test(m.text())) problems.push(`console: ${m.text()}`); });
  p.on('pageerror', (e) => problems.push(`pageerror: ${e.stack}`));
  p.on('dialog', (d) => { problems.push(`dialog opened: ${d.message()}`); void d.dismiss(); });
  await p.goto(url);
  try {
    await p.waitForFunction(() => document.body.dataset.chartsRendered !== undefined, null, { timeout: 30000 });
  } catch (e) {
    console.log('charts not rendered:', await p.evaluate(() => [...document.querySelectorAll('section.chart')].filter((s) => s.getAttribute('data-points') === '0').map((s) => s.getAttribute('data-series')).join(' ')));
    console.log(problems.join('\n'));
    console.log(await p.evaluate(() => JSON.stringify({ sent: globalThis.harness.sent.map((m) => m.type), state: document.getElementById('app')?.dataset.state, html: document.getElementById('app')?.textContent?.slice(0, 300) })));
    throw e;
  }
  const logs = await p.evaluate(() => globalThis.harness.sent.filter((m) => m.type === 'log/write'));
  if (logs.length) problems.push(...logs.map((l) => `panel log: ${l.level} ${l.message}`));
  const facts = await p.evaluate(() => ({
    state: document.getElementById('app')?.dataset.state,
    chartsRendered: document.body.dataset.chartsRendered,
    charts: [...document.querySelectorAll('section.chart')].map((s) => `${s.getAttribute('data-series')}=${s.getAttribute('data-points')}`),
    worst: [...document.querySelectorAll('[data-testid="worst-list"] button')].map((b) => `${b.getAttribute('data-line')}@${b.getAttribute('data-t')}`),
    findings: document.querySelectorAll('[data-testid="findings-list"] li').length,
    overview: !!document.querySelector('[data-testid="overview"]'),
    injected: document.querySelectorAll('img').length,
  }));
  console.log(JSON.stringify(facts, null, 1));
  const reqs = () => p.evaluate(() => globalThis.harness.sent.flatMap((m) => (m.type === 'series/requestBatch' ? m.requests : [m])).filter((m) => m.type === 'series/request').length);
  console.log('requests after first render', await reqs(), 'charts', facts.charts.length);
  await p.waitForTimeout(500);
  console.log('requests 0.5 s later (must not grow)', await reqs());
  await p.screenshot({ path: `${out}/overview-${themeKind}.png`, fullPage: true });
  await p.click('[data-testid="worst-list"] button');
  await p.waitForTimeout(300);
  console.log('requests after the worst click', await reqs());
  const sent = await p.evaluate(() => globalThis.harness.sent.filter((m) => m.type === 'reveal/line'));
  console.log('reveal messages', JSON.stringify(sent));
  const tabCount = await p.evaluate(() => document.querySelectorAll('vscode-panel-tab').length);
  for (let i = 1; i < tabCount; i++) {
    const name = await p.evaluate((k) => document.querySelectorAll('.view')[k]?.getAttribute('data-view'), i);
    await p.click(`#tab-${i}`);
    await p.waitForTimeout(300);
    if (i === 1) console.log('requests after the first tab click', await reqs(), await p.evaluate(() => [innerWidth, document.documentElement.clientWidth]));
    await p.screenshot({ path: `${out}/${name}-${themeKind}.png`, fullPage: true });
  }
  // zoom with the keyboard on the first time chart and check the envelope was re-queried
  await p.click('#tab-1');
  const before = await reqs();
  await p.focus('section.chart[data-series="nis/tdoa"]');
  await p.keyboard.press('+');
  await p.waitForTimeout(400);
  const after = await p.evaluate(() => { const all = globalThis.harness.sent.flatMap((m) => (m.type === 'series/requestBatch' ? m.requests : [m])).filter((m) => m.type === 'series/request'); return { n: all.length, last: all.at(-1) }; });
  console.log('requests before/after zoom', before, after.n, JSON.stringify(after.last));
} finally {
  await browser.close();
  server.close();
}
console.log(problems.length ? `PROBLEMS:\n${problems.join('\n')}` : 'no console errors, CSP violations or dialogs');
process.exitCode = problems.length ? 1 : 0;

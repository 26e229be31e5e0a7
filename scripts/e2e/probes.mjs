// Functions the e2e tests and the editor bench run INSIDE the browser (page or webview frame) via Playwright's
// evaluate. They are plain JS so the Node-side TypeScript project needs no DOM library; each is self-contained
// (Playwright sends its source text). Types: probes.d.mts.

/** Number of canvases among `els` that have a size and at least one non-transparent pixel. */
export function countDrawnCanvases(els) {
  return els.filter((c) => {
    if (!c.width || !c.height || c.getBoundingClientRect().width === 0) return false;
    const ctx = c.getContext('2d');
    if (!ctx) return false;
    const d = ctx.getImageData(0, 0, c.width, c.height).data;
    for (let i = 3; i < d.length; i += 4) if (d[i] !== 0) return true;
    return false;
  }).length;
}

/** The theme's editor background colour as the webview sees it. */
export function editorBackground(body) {
  return getComputedStyle(body).getPropertyValue('--vscode-editor-background').trim();
}

/** What markup payloads could have left behind in the webview document (issue 9). */
export function inspectForInjection() {
  let parentPwned = null;
  try {
    parentPwned = window.parent.__pwned ?? null;
  } catch {
    parentPwned = null;
  }
  return {
    pwned: window.__pwned ?? null,
    parentPwned,
    imgX: document.querySelectorAll('img[src="x"]').length,
    handlers: document.querySelectorAll('[onerror], [onload], [onclick], [onmouseover]').length,
    jsLinks: document.querySelectorAll('a[href^="javascript:" i]').length,
    svgs: [...document.querySelectorAll('svg')].filter((s) => s.hasAttribute('onload')).length,
    scripts: [...document.querySelectorAll('script')].map((s) => ({ src: s.src, hasNonce: !!s.nonce, text: (s.textContent ?? '').slice(0, 80) })),
    text: document.body.innerText,
  };
}

/** Appends an inline script that sets window.__cspProbe; returns the flag (null when the CSP refused it). */
export function injectInlineScript() {
  const s = document.createElement('script');
  s.textContent = 'window.__cspProbe = 1;';
  document.body.appendChild(s);
  return window.__cspProbe ?? null;
}

/** `window.__pwned` of the current frame, or null. */
export function pwnedFlag() {
  return window.__pwned ?? null;
}

/**
 * Arms a one-shot watch on `section`: the time from its next keydown to the next write of its `data-points`
 * attribute (the chart answered the series request the key caused). Read it with {@link readPointsWatch}.
 */
export function armPointsWatch(section, timeout_ms) {
  window.__residuumWatch = new Promise((resolve) => {
    let tKey = -1;
    const onKey = () => {
      if (tKey < 0) tKey = performance.now();
    };
    section.addEventListener('keydown', onKey, { capture: true });
    const done = (v) => {
      clearTimeout(timer);
      obs.disconnect();
      section.removeEventListener('keydown', onKey, { capture: true });
      resolve(v);
    };
    const timer = setTimeout(() => done({ ms: -1, points: section.getAttribute('data-points') }), timeout_ms);
    const obs = new MutationObserver(() => {
      if (tKey >= 0) done({ ms: performance.now() - tKey, points: section.getAttribute('data-points'), envelopeMs: section.getAttribute('data-last-envelope-ms'), timing: section.getAttribute('data-last-timing') });
    });
    obs.observe(section, { attributes: true, attributeFilter: ['data-points'] });
  });
  return true;
}

/** The result of the armed watch: `{ ms, points, envelopeMs, timing }`, `ms` -1 on timeout. */
export function readPointsWatch() {
  return window.__residuumWatch;
}

/**
 * Waits until the panel's count of fully answered zooms (`body[data-zooms-answered]`) exceeds `args[0]`; returns
 * `body[data-last-zoom-all-ms]` (user zoom until every chart on screen drew its answer), or -1 after `args[1]` ms.
 */
export function waitZoomAnswered(body, args) {
  const [before, timeout_ms] = args;
  return new Promise((resolve) => {
    const t0 = performance.now();
    const tick = () => {
      if (Number(body.dataset.zoomsAnswered ?? 0) > before) resolve(Number(body.dataset.lastZoomAllMs));
      else if (performance.now() - t0 > timeout_ms) resolve(-1);
      else setTimeout(tick, 5);
    };
    tick();
  });
}

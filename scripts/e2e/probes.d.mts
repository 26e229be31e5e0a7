// Types of scripts/e2e/probes.mjs (browser-side functions; element arguments are opaque handles on the Node side).

/** Number of drawn canvases. */
export declare function countDrawnCanvases(els: unknown[]): number;
/** The theme's editor background colour. */
export declare function editorBackground(body: unknown): string;
/** What markup payloads could have left behind. */
export declare function inspectForInjection(): {
  pwned: unknown;
  parentPwned: unknown;
  imgX: number;
  handlers: number;
  jsLinks: number;
  svgs: number;
  scripts: { src: string; hasNonce: boolean; text: string }[];
  text: string;
};
/** Tries an inline script; null when the CSP refused it. */
export declare function injectInlineScript(): number | null;
/** `window.__pwned` or null. */
export declare function pwnedFlag(): unknown;
/** Milliseconds until `data-points` is next written, or -1. */
export declare function nextPointsWrite(args: [unknown, number]): Promise<number>;

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
/** Arms a keydown -> data-points watch on a chart section (Locator.evaluate passes the element first). */
export declare function armPointsWatch(section: unknown, timeout_ms: number): boolean;
/** The armed watch's result. */
export declare function readPointsWatch(): Promise<{ ms: number; points: string | null; envelopeMs?: string | null; timing?: string | null }>;
export declare function waitZoomAnswered(body: HTMLElement, args: [number, number]): Promise<number>;

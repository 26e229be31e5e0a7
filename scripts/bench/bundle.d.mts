/** Module aliases shared with scripts/build.mjs (jsonc-parser bundled from its ESM build). */
export const ALIAS: Record<string, string>;
/** Newest modification time (ms) of the .ts files under the given files or folders. */
export function newestSource(paths: string[]): number;
/** Build `entry` to `outfile` (node, cjs) unless `outfile` is newer than every .ts file under `watch`; returns `outfile`. */
export function ensureBundle(entry: string, outfile: string, watch: string[]): Promise<string>;

/**
 * Ordering and stepping helpers of the editor: which findings reach the Problems panel first, and which worst
 * epoch comes next. Pure (no `vscode`).
 */
import type { Finding } from '../core/report';

const SEVERITY_RANK: Record<string, number> = { error: 0, warning: 1, info: 2 };

/**
 * Findings worst first: smallest tail probability `p`, then severity (error, warning, info), then largest score;
 * at most `cap`. Findings without `p` follow those with one. Stable for ties.
 */
export function rankFindings(findings: readonly Finding[], cap: number): Finding[] {
  const keyed = findings.map((f, i) => ({ f, i }));
  keyed.sort((a, b) => {
    const pa = a.f.p ?? Infinity;
    const pb = b.f.p ?? Infinity;
    if (pa !== pb) return pa < pb ? -1 : 1;
    const sa = SEVERITY_RANK[a.f.severity ?? 'warning'] ?? 1;
    const sb = SEVERITY_RANK[b.f.severity ?? 'warning'] ?? 1;
    if (sa !== sb) return sa - sb;
    const ca = a.f.score ?? -Infinity;
    const cb = b.f.score ?? -Infinity;
    if (ca !== cb) return ca > cb ? -1 : 1;
    return a.i - b.i;
  });
  return keyed.slice(0, Math.max(0, cap)).map((k) => k.f);
}

/**
 * The index after (`direction` 1) or before (-1) `current` in a list of `count` entries, wrapping around; the
 * first (or last) entry when nothing is selected; undefined for an empty list.
 */
export function stepIndex(current: number | undefined, count: number, direction: 1 | -1): number | undefined {
  if (count <= 0) return undefined;
  if (current === undefined || current < 0 || current >= count) return direction === 1 ? 0 : count - 1;
  return (current + direction + count) % count;
}

/** Share of NIS inside the 95% bounds over all channels, weighted by updates; undefined without any. */
export function headlineInside95(channels: readonly { updates: number; nis: { inside95?: number } }[]): number | undefined {
  let weight = 0;
  let sum = 0;
  for (const c of channels) {
    const inside = c.nis.inside95;
    const n = c.updates;
    if (typeof inside !== 'number' || !Number.isFinite(inside) || n <= 0) continue;
    weight += n;
    sum += inside * n;
  }
  return weight > 0 ? sum / weight : undefined;
}

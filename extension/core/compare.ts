/**
 * Side-by-side comparison of two or more runs' reports: for each channel and error block the figures, their
 * differences against the first run, and which run is better (NIS inside bounds closer to 95%, lower RMSE,
 * fewer outliers, faster settling).
 */
import type { Report } from './report';

/** One compared figure. */
export interface ComparedFigure {
  what: string;
  unit: string;
  /** One value per run (null where not computed). */
  values: (number | null)[];
  /** Differences against the first run (null where not computable). */
  deltas: (number | null)[];
  /** Index of the best run, absent when fewer than two runs have the figure or they tie. */
  best?: number;
  rule: 'lower' | 'closer-to-0.95';
}

function pick(r: Report, path: string[]): number | null {
  let cur: unknown = r;
  for (const k of path) {
    if (cur === null || typeof cur !== 'object') return null;
    cur = (cur as Record<string, unknown>)[k];
  }
  return typeof cur === 'number' && Number.isFinite(cur) ? cur : null;
}

/** Compare reports figure by figure. */
export function compareReports(reports: Report[]): ComparedFigure[] {
  const rows: { what: string; unit: string; rule: ComparedFigure['rule']; get: (r: Report) => number | null }[] = [];
  const names = new Set<string>();
  for (const r of reports) for (const c of r.channels) names.add(c.name);
  for (const name of names) {
    const ch = (r: Report) => r.channels.find((c) => c.name === name);
    rows.push({ what: `${name}: NIS inside 95%`, unit: '', rule: 'closer-to-0.95', get: (r) => ch(r)?.nis.inside95 ?? null });
    rows.push({ what: `${name}: NIS mean`, unit: '', rule: 'lower', get: (r) => ch(r)?.nis.mean ?? null });
    rows.push({ what: `${name}: outliers`, unit: '', rule: 'lower', get: (r) => ch(r)?.outliers ?? null });
  }
  rows.push({ what: 'position RMSE', unit: 'm', rule: 'lower', get: (r) => pick(r, ['errors', 'position', 'rmse']) });
  rows.push({ what: 'velocity RMSE', unit: 'm/s', rule: 'lower', get: (r) => pick(r, ['errors', 'velocity', 'rmse']) });
  rows.push({ what: 'orientation RMSE', unit: 'deg', rule: 'lower', get: (r) => pick(r, ['errors', 'orientation', 'rmseDeg']) });
  rows.push({ what: 'position settling time', unit: 's', rule: 'lower', get: (r) => pick(r, ['errors', 'position', 'convergence', 'settleTime']) });
  const out: ComparedFigure[] = [];
  for (const row of rows) {
    const values = reports.map(row.get);
    if (values.every((v) => v === null)) continue;
    const first = values[0];
    const deltas = values.map((v) => (v === null || first === null ? null : v - first));
    const score = (v: number): number => (row.rule === 'lower' ? v : Math.abs(v - 0.95));
    let best: number | undefined;
    let bestScore = Infinity;
    let tie = false;
    let present = 0;
    values.forEach((v, i) => {
      if (v === null) return;
      present++;
      const s = score(v);
      if (s < bestScore - 1e-12) {
        bestScore = s;
        best = i;
        tie = false;
      } else if (Math.abs(s - bestScore) <= 1e-12) tie = true;
    });
    out.push({ what: row.what, unit: row.unit, values, deltas, rule: row.rule, ...(present >= 2 && !tie && best !== undefined ? { best } : {}) });
  }
  return out;
}

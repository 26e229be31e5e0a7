/**
 * Helpers for the demo tests: a plain parser for the generator's own wide CSV (no quoting, known layout), and typed
 * access to jStat (a general-purpose reference library, devDependency, shipped without type declarations).
 */
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);

/** The jStat functions used here. */
export interface JStatChi2 {
  chisquare: { inv(p: number, dof: number): number };
}

/** jStat 1.9 (devDependency). */
export const jStat = (require('jstat') as { jStat: JStatChi2 }).jStat;

/** A parsed demo CSV: metadata, header and columns (NaN for empty cells; string cells kept in `text`). */
export interface DemoTable {
  meta: Record<string, string>;
  header: string[];
  /** 1-based file line of each data row. */
  line: number[];
  col: Map<string, Float64Array>;
  text: Map<string, string[]>;
  /** Number of cells in each data row. */
  widths: number[];
}

/** Parse the generator's CSV output. */
export function parseDemoCsv(csv: string): DemoTable {
  const lines = csv.split('\n');
  if (lines[lines.length - 1] === '') lines.pop();
  const meta: Record<string, string> = {};
  let i = 0;
  for (; i < lines.length && lines[i].startsWith('#'); i++) {
    const m = /^#\s*([^:]+):\s*(.*)$/.exec(lines[i]);
    if (m) meta[m[1].trim().toLowerCase()] = m[2];
  }
  const header = lines[i].split(',');
  const rows = lines.slice(i + 1);
  const col = new Map<string, Float64Array>();
  const text = new Map<string, string[]>();
  for (const h of header) {
    col.set(h, new Float64Array(rows.length));
    text.set(h, new Array<string>(rows.length));
  }
  const widths: number[] = [];
  const line: number[] = [];
  rows.forEach((row, r) => {
    const cells = row.split(',');
    widths.push(cells.length);
    line.push(i + 2 + r);
    header.forEach((h, c) => {
      const s = cells[c] ?? '';
      text.get(h)![r] = s;
      col.get(h)![r] = s === '' ? NaN : Number(s);
    });
  });
  return { meta, header, line, col, text, widths };
}

/** Column by name (throws in the test when absent). */
export function column(t: DemoTable, name: string): Float64Array {
  const c = t.col.get(name);
  if (!c) throw new Error(`no column ${name}`);
  return c;
}

/** Two-sided interval (probability 1 - alpha) for the mean of n chi-square(dof) values, from jStat. */
export function chi2MeanBounds(n: number, dof: number, alpha = 0.001): [number, number] {
  // Source: chi-square acceptance region for a time-average NIS/NEES (Bar-Shalom, Li & Kirubarajan 2001, sec 5.4,
  // via reference-checks.md sec 2.1), quantiles from jStat (general-purpose reference library).
  return [jStat.chisquare.inv(alpha / 2, n * dof) / n, jStat.chisquare.inv(1 - alpha / 2, n * dof) / n];
}

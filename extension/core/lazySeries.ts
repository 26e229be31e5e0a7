/**
 * Series whose big columns are made on first read. A stage's panel series are copies of per-epoch columns (a few MB
 * each on a long log); a caller that only wants the report (the command-line `analyze --json`) never reads them, so
 * they are never made. Anything that reads a column (the worker's transfer list, structured clone, spread, JSON,
 * a test's equality) gets the same values as an eager copy: each column is computed once on its first read and then
 * stored as a plain data property. The closures keep the stage's own columns alive until then, which a caller that
 * holds the series would keep anyway through the copies.
 */
import type { Series } from './series';

/** The columns of a series that may be made lazily. */
export type LazyColumns = Partial<Record<'x' | 'y' | 'line' | 'lo' | 'hi', () => Float64Array>>;

/**
 * A series with the given plain fields and columns computed on first read.
 * @param fields key, group, label, unit and any column already at hand
 * @param columns makers of the remaining columns (each called at most once)
 */
export function lazySeries(fields: Omit<Series, 'x' | 'y'> & Partial<Pick<Series, 'x' | 'y'>>, columns: LazyColumns): Series {
  const s = fields as Series;
  for (const [name, make] of Object.entries(columns) as [keyof LazyColumns, () => Float64Array][]) {
    Object.defineProperty(s, name, {
      enumerable: true,
      configurable: true,
      get(): Float64Array {
        const value = make();
        Object.defineProperty(s, name, { value, enumerable: true, configurable: true, writable: true });
        return value;
      },
      set(value: Float64Array): void {
        Object.defineProperty(s, name, { value, enumerable: true, configurable: true, writable: true });
      },
    });
  }
  return s;
}

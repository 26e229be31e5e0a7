/** Builders of small NavLog objects for the error-analysis tests (in-memory; no reader involved). */
import type { NavLog, ReferenceStream, StateStream } from '../../../extension/core/model';

/** A state stream from named columns (all of the same length). */
export function stateStream(t_s: ArrayLike<number>, columns: Record<string, ArrayLike<number>>, file = 'run.csv'): StateStream {
  const n = t_s.length;
  const cols = new Map<string, Float64Array>();
  for (const [k, v] of Object.entries(columns)) cols.set(k, Float64Array.from(v));
  return { t_s: Float64Array.from(t_s), line: Float64Array.from({ length: n }, (_, i) => i + 2), file, length: n, columns: cols };
}

/** A NavLog around a state stream and an optional separate reference. */
export function navLog(state: StateStream, reference?: ReferenceStream, extra: Partial<NavLog> = {}): NavLog {
  return {
    path: state.file, format: 'csv', rows: state.length + (reference?.length ?? 0), meta: {}, frame: 'ENU', state,
    channels: [], reference, anchors: [], anchorIds: [], resets: [], files: [state.file],
    conventions: { attitudeErrorSide: 'nav' }, diagnostics: [], ...extra,
  };
}

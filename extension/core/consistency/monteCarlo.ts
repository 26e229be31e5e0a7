/**
 * N-run Monte Carlo average NIS (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4): with N independent runs of the
 * same scenario, N * mean_i eps_i(k) ~ chi-square(N * dof) at every step k, so the acceptance region of the average
 * is chi2(N dof)/N. (Monte Carlo NEES belongs to core/errors; the interval is the same function.)
 */
import { chi2MeanInterval } from '../stats/chi2';

/** Two-sided bounds at `confidence` of the N-run average of chi-square(dof) values: chi2(N dof)/N. */
export function monteCarloNisBounds(confidence: number, dof: number, runs: number): [number, number] {
  return chi2MeanInterval(confidence, dof, runs);
}

/**
 * Average across runs at each step: `runs[r][k]` is run r's NIS at step k (runs aligned by step; the shortest run
 * sets the length). Steps where a run has no finite value are NaN (the bounds need all N runs).
 */
export function averageAcrossRuns(runs: Float64Array[]): Float64Array {
  if (runs.length === 0) return new Float64Array(0);
  let len = Infinity;
  for (const r of runs) len = Math.min(len, r.length);
  const out = new Float64Array(len);
  for (let k = 0; k < len; k++) {
    let s = 0;
    for (const r of runs) s += r[k];
    out[k] = Number.isFinite(s) ? s / runs.length : NaN;
  }
  return out;
}

/** Share of steps whose N-run average lies inside the bounds (steps with NaN left out); NaN when none. */
export function monteCarloInsideShare(average: Float64Array, bounds: [number, number]): number {
  let n = 0;
  let inside = 0;
  for (const v of average) {
    if (!Number.isFinite(v)) continue;
    n++;
    if (v >= bounds[0] && v <= bounds[1]) inside++;
  }
  return n > 0 ? inside / n : NaN;
}

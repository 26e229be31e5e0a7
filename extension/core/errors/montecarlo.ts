/**
 * N-run Monte Carlo consistency (Bar-Shalom, Li and Kirubarajan 2001, sec. 5.4): at each epoch k the average
 * NEES over the runs, eps_bar(k) = (1/N_k) sum_i eps_i(k), is compared with the two-sided interval
 * chi2(N_k n)(alpha/2) / N_k, chi2(N_k n)(1 - alpha/2) / N_k, where N_k is the number of runs with a value at k;
 * likewise the average NIS per channel. Runs are aligned by time on the first run's epochs (channel: its first
 * run's update times): a run contributes at epoch k its epoch nearest in time, when within half the median step.
 * Unlike the single-run windowed test, the runs are independent, so no effective sample size is needed.
 */
import type { NavLog, Channel } from '../model';
import type { AnalysisSettings } from '../settings';
import type { Series } from '../series';
import { chi2MeanInterval } from '../stats/chi2';
import { computeNis } from '../consistency/nis';
import { medianStep } from './align';
import { buildErrorTrack, type BlockName } from './track';

/** Monte Carlo figures of one block or channel. */
export interface MonteCarloSeries {
  dof: number;
  /** Epochs (or update times) with at least one run's value. */
  epochs: number;
  /** Mean of the per-epoch N-run averages. */
  mean?: number;
  /** Share of epochs whose N-run average lies inside its interval. */
  inside95?: number;
  /** The interval for all N runs present. */
  bounds95?: [number, number];
  /** Per epoch: time, N-run average, runs present and bounds (for the panel). */
  t: Float64Array;
  average: Float64Array;
  runs: Float64Array;
  lo: Float64Array;
  hi: Float64Array;
}

/** The Monte Carlo block. */
export interface MonteCarloBlock {
  runs: number;
  nees: Partial<Record<BlockName, MonteCarloSeries>>;
  nis: Record<string, MonteCarloSeries>;
  notes: string[];
}

/** Nearest index of t in ascending `times` (binary search). */
function nearest(times: Float64Array, length: number, t: number): number {
  let lo = 0, hi = length - 1;
  if (length === 0) return -1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (times[mid] <= t) lo = mid; else hi = mid;
  }
  return Math.abs(times[lo] - t) <= Math.abs(times[hi] - t) ? lo : hi;
}

/** Average per grid time of values from several runs, each with its own times. */
function averageOnGrid(
  grid: Float64Array, runs: { t: Float64Array; v: Float64Array; length: number }[], dof: number, confidence: number,
): MonteCarloSeries {
  const G = grid.length;
  const avg = new Float64Array(G).fill(NaN), cnt = new Float64Array(G), lo = new Float64Array(G).fill(NaN), hi = new Float64Array(G).fill(NaN);
  const steps = runs.map((r) => medianStep(r.t, r.length));
  const sum = new Float64Array(G);
  runs.forEach((r, i) => {
    const tol = Number.isFinite(steps[i]) ? steps[i] / 2 : 0;
    for (let g = 0; g < G; g++) {
      const j = nearest(r.t, r.length, grid[g]);
      if (j < 0 || Math.abs(r.t[j] - grid[g]) > tol) continue;
      const v = r.v[j];
      if (!Number.isFinite(v)) continue;
      sum[g] += v; cnt[g]++;
    }
  });
  let s = 0, used = 0, inside = 0;
  for (let g = 0; g < G; g++) {
    if (cnt[g] === 0) continue;
    avg[g] = sum[g] / cnt[g];
    const [a, b] = chi2MeanInterval(confidence, dof, cnt[g]);
    lo[g] = a; hi[g] = b;
    s += avg[g]; used++;
    if (avg[g] >= a && avg[g] <= b) inside++;
  }
  return {
    dof, epochs: used, mean: used ? s / used : undefined, inside95: used ? inside / used : undefined,
    bounds95: runs.length > 0 ? chi2MeanInterval(confidence, dof, runs.length) : undefined,
    t: grid, average: avg, runs: cnt, lo, hi,
  };
}

/**
 * N-run average NEES per block and average NIS per channel, aligned by time, with Bar-Shalom's chi2(N n)/N
 * bounds. Runs without a reference contribute no NEES; runs without a channel contribute no NIS to it.
 */
export function analyzeMonteCarlo(runs: NavLog[], settings: AnalysisSettings): MonteCarloBlock {
  const notes: string[] = [];
  const block: MonteCarloBlock = { runs: runs.length, nees: {}, nis: {}, notes };
  if (runs.length === 0) return block;
  const tracks = runs.map((r) => { try { return buildErrorTrack(r, settings); } catch { return undefined; } });
  const missing = tracks.filter((t) => !t).length;
  if (missing > 0) notes.push(`${missing} of ${runs.length} runs have no usable reference and give no NEES`);
  const first = tracks.find((t) => t);
  if (first) {
    for (const name of ['position', 'velocity', 'orientation'] as BlockName[]) {
      const per = tracks.flatMap((t) => {
        const b = t?.blocks.find((x) => x.name === name);
        return t && b?.nees ? [{ t: t.t_s, v: b.nees, length: t.length, dof: b.neesErr.length }] : [];
      });
      if (per.length === 0) continue;
      const dof = per[0].dof;
      if (per.some((p) => p.dof !== dof)) { notes.push(`${name}: runs disagree on the NEES dof; left out`); continue; }
      const grid = first.t_s.slice(first.w0, first.w1);
      block.nees[name] = averageOnGrid(grid, per, dof, settings.confidence);
    }
  }
  const names = new Set<string>();
  for (const r of runs) for (const c of r.channels) names.add(c.name);
  for (const name of names) {
    const chans = runs.map((r) => r.channels.find((c) => c.name === name)).filter((c): c is Channel => !!c);
    const dof = chans[0].dof;
    if (chans.some((c) => c.dof !== dof)) { notes.push(`channel ${name}: runs disagree on its dof; left out`); continue; }
    const per = chans.map((c) => {
      const nis = computeNis(c).slice(0, c.length);
      for (let i = 0; i < c.length; i++) if (c.rejected[i]) nis[i] = NaN; // rejected updates stay out, as in the report
      return { t: c.t_s, v: nis, length: c.length };
    });
    block.nis[name] = averageOnGrid(chans[0].t_s.slice(0, chans[0].length), per, dof, settings.confidence);
  }
  return block;
}

/**
 * The panel's series of a Monte Carlo block: `montecarlo/nees/<block>` and `montecarlo/nis/<channel>`, the N-run
 * average per epoch with its chi2(N n)/N interval as `lo`/`hi`.
 */
export function monteCarloSeries(block: MonteCarloBlock): Series[] {
  const out: Series[] = [];
  const add = (key: string, label: string, m: MonteCarloSeries): void => {
    out.push({ key, group: 'errors', label, unit: '1', x: m.t, y: m.average, lo: m.lo, hi: m.hi });
  };
  for (const [name, m] of Object.entries(block.nees)) {
    if (m) add(`montecarlo/nees/${name}`, `${name}: average NEES over ${block.runs} runs (${m.dof} dof) with its interval`, m);
  }
  for (const [name, m] of Object.entries(block.nis)) add(`montecarlo/nis/${name}`, `${name}: average NIS over ${block.runs} runs (${m.dof} dof) with its interval`, m);
  return out;
}

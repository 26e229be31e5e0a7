/**
 * The measurement-only track: raw TDOA and range records grouped into epochs and solved one epoch at a time with
 * {@link tdoaFix} / {@link rangeFix}, independent of the estimator (only the root choice of a 4-anchor TDOA epoch
 * and the fallback start use a prior: the previous fix when recent, else the estimate).
 *
 * Epochs: records sorted by time; an epoch opens at a record and takes every record within half the typical
 * update period of one link (the median over links of their median interval) after it; a link seen twice in an
 * epoch keeps its last value. TDOA and range records form separate epochs.
 */
import type { LinkTable, RawColumns } from './collect';
import { rangeFix, type RangeObservation } from './rangeFix';
import { median } from './residuals';
import { tdoaFix, type TdoaObservation } from './tdoaFix';
import type { Vec3_m } from './vec3';

/** Fixes over time (columns aligned, ascending time). */
export interface FixTrack {
  length: number;
  t_s: Float64Array;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  /** RMS of the fix's own measurement residuals, metres. */
  rms_m: Float64Array;
  /** Epochs formed (fixes attempted). */
  epochs: number;
}

/** A previous fix older than this is not used as the prior, seconds. */
const PRIOR_MAX_AGE_S = 2;

/** Typical interval between records of one link: median over links of the median step. */
export function typicalLinkPeriod_s(t_s: Float64Array, perLink: readonly number[][]): number {
  const periods: number[] = [];
  for (const list of perLink) {
    if (list.length < 3) continue;
    const steps: number[] = [];
    for (let k = 1; k < list.length; k++) {
      const d = t_s[list[k]] - t_s[list[k - 1]];
      if (d > 0) steps.push(d);
    }
    if (steps.length > 0) periods.push(median(steps));
  }
  return periods.length > 0 ? median(periods) : NaN;
}

/**
 * Solve every epoch of raw records. `perLink` lists the raw record indices per link (ascending time);
 * `estimateAt` gives the estimate at a time (undefined where unknown).
 */
export function fixTrack(
  raw: RawColumns,
  links: LinkTable,
  positions: readonly (Vec3_m | undefined)[],
  perLink: readonly number[][],
  estimateAt: (t_s: number) => Vec3_m | undefined,
): FixTrack {
  const period = typicalLinkPeriod_s(raw.t_s, perLink);
  const span = Number.isFinite(period) ? 0.5 * period : 0.05;
  const out = { t: [] as number[], x: [] as number[], y: [] as number[], z: [] as number[], rms: [] as number[] };
  let epochs = 0;
  for (const kind of [0, 1]) {
    const idx: number[] = [];
    for (let k = 0; k < raw.length; k++) if (raw.kind[k] === kind && Number.isFinite(raw.value_m[k])) idx.push(k);
    idx.sort((p, q) => raw.t_s[p] - raw.t_s[q] || p - q);
    let last: { t: number; p: Vec3_m } | undefined;
    for (let s = 0; s < idx.length; ) {
      const tStart = raw.t_s[idx[s]];
      let e = s;
      const latest = new Map<number, number>();
      let tSum = 0;
      while (e < idx.length && raw.t_s[idx[e]] - tStart <= span) {
        latest.set(raw.link[idx[e]], idx[e]);
        tSum += raw.t_s[idx[e]];
        e++;
      }
      const tEpoch = tSum / (e - s);
      s = e;
      const prior = last && tEpoch - last.t <= PRIOR_MAX_AGE_S ? last.p : estimateAt(tEpoch);
      let fix: { p: Vec3_m; rms_m: number } | undefined;
      if (kind === 0) {
        const obs: TdoaObservation[] = [];
        for (const [L, k] of latest) obs.push({ i: links.a[L], j: links.b[L], d_m: raw.value_m[k] });
        if (countAnchors(obs) < 4) continue;
        epochs++;
        fix = tdoaFix(positions, obs, prior);
      } else {
        const obs: RangeObservation[] = [];
        for (const [L, k] of latest) obs.push({ anchor: links.a[L], r_m: raw.value_m[k] });
        if (obs.length < 4) continue;
        epochs++;
        fix = rangeFix(positions, obs, prior);
      }
      if (!fix) continue;
      last = { t: tEpoch, p: fix.p };
      out.t.push(tEpoch);
      out.x.push(fix.p[0]);
      out.y.push(fix.p[1]);
      out.z.push(fix.p[2]);
      out.rms.push(fix.rms_m);
    }
  }
  const order = out.t.map((_, k) => k).sort((p, q) => out.t[p] - out.t[q] || p - q);
  const pick = (a: number[]): Float64Array => Float64Array.from(order, (k) => a[k]);
  return { length: order.length, t_s: pick(out.t), x: pick(out.x), y: pick(out.y), z: pick(out.z), rms_m: pick(out.rms), epochs };
}

function countAnchors(obs: readonly TdoaObservation[]): number {
  const s = new Set<number>();
  for (const o of obs) {
    s.add(o.i);
    s.add(o.j);
  }
  return s.size;
}

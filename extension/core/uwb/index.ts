/**
 * The UWB stage: which anchor is lying, and whether the anchor geometry can support the estimate.
 *
 * Inputs (collect.ts): TDOA update channels (ids `i-j`), range update channels, raw TDOA and range records, anchor
 * positions (anchors file / mapping / settings via `log.anchors`, and `# anchor <id>: x y z` metadata).
 * Outputs: the report's `uwb` block, `suspect-anchor`, `too-few-anchors`, `high-dop` findings (and a `note` when
 * anchors lack positions), and series for the panel.
 *
 * Steps:
 * 1. Per link (pair or range link) and per anchor: update count, NIS mean, outliers (NIS beyond the chi-square
 *    gate `settings.gate` for 1 dof; updates the estimator rejected are counted apart), innovation mean, sample
 *    SD, median and MAD. An anchor's innovations are its links' innovations oriented so that a long range to the
 *    anchor is positive: +nu where it is j of pair i-j or the range anchor, -nu where it is i.
 * 2. With ground truth (state `gt_p_*`, or the reference stream with `settings.timeOffset_s`): residuals of the raw
 *    records, measured minus the value the true position implies (residuals.ts); likewise against the estimate.
 * 3. Blame (anchors.ts): anomalies per link are the NIS outliers and rejected updates when the log has updates,
 *    otherwise raw residuals beyond the gate on a robust scale; per-anchor offsets from the link means. Suspect =
 *    blamed for outliers, or biased offset.
 * 4. Geometry (geometryWindows.ts): DOP per window, `too-few-anchors` and `high-dop` findings.
 * 5. Measurement-only fixes from the raw records (fixTrack.ts) and their RMSE against truth and estimate.
 */
import type { Channel, NavLog } from '../model';
import type { Finding } from '../report';
import type { Series, StageOutput } from '../series';
import type { AnalysisSettings } from '../settings';
import { computeNis } from '../consistency/nis';
import { chi2Quantile } from '../stats/chi2';
import { blameAnchors, estimateOffsets, gateZ, isBiased, type LinkEvidence, type LinkMean } from './anchors';
import { buildAnchorTable, collectRaw, collectUpdates, groupByLink, indicesByLink, type LinkGroups, type LinkTable, type UpdateColumns } from './collect';
import { fixTrack } from './fixTrack';
import { geometryWindows } from './geometryWindows';
import {
  MAD_TO_SIGMA, interpolateTrack, makeTrack, maxBridgedGap_s, median, predictedRange_m, predictedTdoa_m, summarizeFiniteInPlace, summarizeValues,
  type Track, type ValueSummary,
} from './residuals';
import type { Vec3_m } from './vec3';
import { lazySeries } from '../lazySeries';
import { giveBack, takeFloat64 } from '../scratch';

/** The channel rule and the per-anchor statistics function, re-exported for callers of the stage. */
export { isTdoaChannel, isRangeChannel, parsePairId } from './collect';
export { summarizeValues, type ValueSummary } from './residuals';

/** Default geometry window, seconds. */
export const UWB_WINDOW_S = 1;
/** At most this many `too-few-anchors` and as many `high-dop` findings; the last one says how many were left out. */
export const MAX_GEOMETRY_FINDINGS = 100;

/**
 * Robust and classical summary of a set of residuals, metres, as the report gives it: {@link ValueSummary} without
 * the lag-1 autocorrelation.
 */
export type ResidualReport = Omit<ValueSummary, 'rho1'>;

/** Figures shared by an anchor and a TDOA pair (a link): updates, NIS, innovations and residuals. */
export interface UwbLinkFigures {
  /** Filter updates involving the anchor or pair (including rejected ones). */
  updates: number;
  rejected: number;
  nis: { mean?: number };
  /** Accepted updates with NIS beyond the gate. */
  outliers: number;
  /** Mean, sample SD, median and MAD of the oriented innovations, metres. */
  innovationMean?: number;
  innovationStd?: number;
  median?: number;
  mad?: number;
  /** Raw records involving the anchor or pair. */
  measurements: number;
  /** Mean oriented residual against ground truth, metres. */
  residualMean?: number;
  residual?: ResidualReport;
  /** Oriented residuals against the estimate. */
  residualVsEstimate?: ResidualReport;
}

/** Per-anchor figures. */
export interface UwbAnchorReport extends UwbLinkFigures {
  id: string;
  /** Position, metres, navigation frame (absent when unknown). */
  p?: [number, number, number];
  /** Constant offset (clock or survey bias) with its 1-sigma; `relative` when only TDOA saw it (median anchor = 0). */
  offset?: { value: number; sigma: number; source: 'truth' | 'innovation' | 'estimate'; relative: boolean };
  /** Share of all anomalies (outliers and rejections, or gated residuals) on links involving this anchor. */
  anomalyShare?: number;
  suspect: boolean;
  reason?: string;
}

/** Per-pair figures of a TDOA pair `i-j` (d_j - d_i); range links are reported under their anchor only. */
export interface UwbPairReport extends UwbLinkFigures {
  id: string;
  i: string;
  j: string;
  /** Significantly more anomalies than the baseline (anchors.ts). */
  excessAnomalies: boolean;
  anomalies: number;
}

/** The report's `uwb` block. */
export interface UwbBlock {
  /** 'tdoa', 'range' or 'mixed' (both present). */
  kind: 'tdoa' | 'range' | 'mixed';
  channels: string[];
  /** NIS gate used for outliers (chi-square quantile, 1 dof). */
  gateNis: number;
  /** Where the anomalies for blame came from. */
  evidence: 'updates' | 'residuals-vs-truth' | 'residuals-vs-estimate' | 'none';
  baselineAnomalyRate?: number;
  anchors: UwbAnchorReport[];
  pairs: UwbPairReport[];
  /** Anchor ids used by measurements but without a known position. */
  anchorsWithoutPosition: string[];
  dop: {
    kind: 'PDOP';
    model: 'tdoa-correlated' | 'range';
    window_s: number;
    windows: number;
    median?: number;
    max?: number;
    /** Windows with undefined DOP: too few anchors or singular geometry. */
    undefined: number;
    tooFewAnchors: number;
    aboveThreshold: number;
    threshold: number;
    /** Windows without a position to evaluate the geometry at. */
    noPosition: number;
    /** Which track gave the position: estimate, truth or the fixes. */
    position?: 'estimate' | 'truth' | 'fix';
  };
  multilateration: {
    epochs: number;
    fixes: number;
    /** Epochs solved again without one gross error (fixTrack.ts). */
    refitted: number;
    /** Converged fixes left out because their residual RMS is far above the others' (fixTrack.ts). */
    rejected: number;
    rmseVsTruth?: number;
    rmse2dVsTruth?: number;
    rmseVsEstimate?: number;
    /** Median 3-D distance to the truth (robust to the rare fix thrown far by weak vertical geometry), metres. */
    medianErrorVsTruth?: number;
    /** Median RMS of the fixes' own measurement residuals, metres. */
    medianResidual?: number;
  };
}

/** Extra knobs of {@link analyzeUwb} (defaults as documented). */
export interface UwbOptions {
  /** Geometry window, seconds (UWB_WINDOW_S). */
  window_s?: number;
}

function toReport(s: ValueSummary): ResidualReport | undefined {
  if (s.count === 0) return undefined;
  return { count: s.count, mean: s.mean, std: s.std, median: s.median, mad: s.mad, rms: s.rms };
}

function fmt(x: number, digits = 3): string {
  return Number.isFinite(x) ? Number(x.toPrecision(digits)).toString() : String(x);
}

/**
 * Truth track: state `gt_p_*` when present, else the reference stream (its times shifted by `timeOffset_s`);
 * `settings.referenceOffset_m` (a navigation-frame offset, e.g. tag height above the reference point) is added.
 * The body-frame `leverArm_m` is not applied here (it needs an attitude per epoch; the errors stage applies it).
 */
function truthTrack(log: NavLog, settings: AnalysisSettings): Track | undefined {
  const c = log.state.columns;
  let track: Track | undefined;
  const gx = c.get('gt_p_x');
  const gy = c.get('gt_p_y');
  const gz = c.get('gt_p_z');
  if (gx && gy && gz) {
    const t = makeTrack(log.state.t_s, gx, gy, gz, log.state.length);
    if (t.length > 0) track = t;
  }
  const r = log.reference;
  if (!track && r) {
    const rx = r.columns.get('p_x');
    const ry = r.columns.get('p_y');
    const rz = r.columns.get('p_z');
    if (rx && ry && rz) {
      const t = makeTrack(r.t_s, rx, ry, rz, r.length, settings.timeOffset_s);
      if (t.length > 0) track = t;
    }
  }
  const off = settings.referenceOffset_m;
  if (track && off) {
    // a new track: its columns may be views of the log's
    const n = track.length;
    const shifted: Track = { t_s: track.t_s, x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n), length: n };
    for (let k = 0; k < n; k++) {
      shifted.x[k] = track.x[k] + off[0];
      shifted.y[k] = track.y[k] + off[1];
      shifted.z[k] = track.z[k] + off[2];
    }
    track = shifted;
  }
  return track;
}

/** src[idx[0]], src[idx[1]], ... as a new column. */
function gather(src: Float64Array, idx: ArrayLike<number>): Float64Array {
  const out = new Float64Array(idx.length);
  for (let q = 0; q < idx.length; q++) out[q] = src[idx[q]];
  return out;
}

function estimateTrack(log: NavLog): Track | undefined {
  const c = log.state.columns;
  const x = c.get('p_x');
  const y = c.get('p_y');
  const z = c.get('p_z');
  if (!x || !y || !z) return undefined;
  const t = makeTrack(log.state.t_s, x, y, z, log.state.length);
  return t.length > 0 ? t : undefined;
}

/** Per-link and per-anchor tallies of the updates (step 1 of the file comment). */
interface UpdateTallies extends AnchorCounts {
  linkOutliers: Int32Array;
  linkRejected: Int32Array;
  linkNisMean: Float64Array;
  linkInnov: ValueSummary[];
  /** Summary of the innovations per anchor, oriented as seen from that anchor, link after link in update order. */
  anchorInnov: ValueSummary[];
}

/** Per-anchor counts (length nA) and per-link anomaly lists, shared by the tallies and their work arrays. */
interface AnchorCounts {
  anchorNisSum: Float64Array;
  anchorNisCount: Int32Array;
  anchorUpdates: Int32Array;
  anchorRejected: Int32Array;
  anchorOutliers: Int32Array;
  linkAnomalyTimes: number[][];
  linkAnomalyLines: number[];
}

/** Work arrays of {@link tallyPass}, per link (`link*`, length nL) and per anchor (`anchor*`, length nA). */
interface TallyArrays extends AnchorCounts {
  la: Int32Array;
  lb: Int32Array;
  linkOutliers: Int32Array;
  linkRejected: Int32Array;
  linkNisSum: Float64Array;
  linkNisCount: Int32Array;
  linkNuLength: Int32Array;
}

/**
 * One pass over the updates link after link (`order`, link L at [start[L], start[L + 1])): counts, NIS sums in that
 * order, outliers beyond `gateNis`, and each link's finite accepted innovations into nus[start[L] ...].
 * One flat loop in a small function: the engine optimises it at once (a loop per link in a long function ran mostly
 * unoptimised on the first, and only, call). The loop writes only typed arrays: the updates that are anomalies
 * (rejected, or beyond the gate) go to `anomalies` as indices, and {@link anomalyLists} turns them into the per-link
 * lists afterwards. Pushing times to the lists in the loop made the engine throw its optimised loop away and compile
 * it again four times on the benchmark log (each first push into a list changes its element kind).
 * Returns the number of anomalies written.
 */
function tallyPass(upd: UpdateColumns, order: Int32Array, start: Int32Array, gateNis: number, w: TallyArrays, nus: Float64Array,
  anomalies: Int32Array): number {
  const { la, lb, linkOutliers, linkRejected, linkNisSum, linkNisCount, linkNuLength, anchorNisSum, anchorNisCount,
    anchorUpdates, anchorRejected, anchorOutliers } = w;
  let na = 0;
  const link = upd.link;
  const rejected = upd.rejected;
  const nuCol = upd.nu;
  const nisCol = upd.nis;
  const n = order.length;
  for (let q = 0; q < n; q++) {
    const k = order[q];
    const L = link[k];
    const a = la[L];
    const b = lb[L];
    anchorUpdates[a]++;
    if (b >= 0) anchorUpdates[b]++;
    if (rejected[k]) {
      linkRejected[L]++;
      anchorRejected[a]++;
      if (b >= 0) anchorRejected[b]++;
      anomalies[na++] = k;
      continue;
    }
    const nu = nuCol[k];
    if (nu - nu === 0) nus[start[L] + linkNuLength[L]++] = nu; // finite
    const nis = nisCol[k];
    if (nis - nis === 0) {
      linkNisSum[L] += nis;
      linkNisCount[L]++;
      anchorNisSum[a] += nis;
      anchorNisCount[a]++;
      if (b >= 0) {
        anchorNisSum[b] += nis;
        anchorNisCount[b]++;
      }
      if (nis > gateNis) {
        linkOutliers[L]++;
        anchorOutliers[a]++;
        if (b >= 0) anchorOutliers[b]++;
        anomalies[na++] = k;
      }
    }
  }
  return na;
}

/**
 * Per link, the times of its anomalous updates (in the order {@link tallyPass} met them) and the line of the first:
 * from the first `count` indices of `anomalies`.
 */
function anomalyLists(upd: UpdateColumns, anomalies: Int32Array, count: number, w: TallyArrays): void {
  for (let q = 0; q < count; q++) {
    const k = anomalies[q];
    const L = upd.link[k];
    w.linkAnomalyTimes[L].push(upd.t_s[k]);
    if (Number.isNaN(w.linkAnomalyLines[L])) w.linkAnomalyLines[L] = upd.line[k];
  }
}

/** out[o..o+m) = sign * src[from..from+m); returns o + m. */
function copySigned(src: Float64Array, from: number, m: number, sign: number, out: Float64Array, o: number): number {
  for (let q = 0; q < m; q++) out[o + q] = sign * src[from + q];
  return o + m;
}

/**
 * Step 1: updates per link and per anchor (counts, NIS sums, outliers beyond `gateNis`, oriented innovations).
 * An anchor's innovations are its links' in link order (each link's in update order): +nu where it is j of pair
 * i-j or the range anchor, -nu where it is i.
 */
function tallyUpdates(upd: UpdateColumns, groups: LinkGroups, links: LinkTable, nA: number, gateNis: number): UpdateTallies {
  const nL = links.keys.length;
  const { order, start } = groups;
  const w: TallyArrays = {
    la: Int32Array.from(links.a),
    lb: Int32Array.from(links.b),
    linkOutliers: new Int32Array(nL),
    linkRejected: new Int32Array(nL),
    linkNisSum: new Float64Array(nL),
    linkNisCount: new Int32Array(nL),
    linkNuLength: new Int32Array(nL),
    anchorNisSum: new Float64Array(nA),
    anchorNisCount: new Int32Array(nA),
    anchorUpdates: new Int32Array(nA),
    anchorRejected: new Int32Array(nA),
    anchorOutliers: new Int32Array(nA),
    linkAnomalyTimes: Array.from({ length: nL }, () => []),
    linkAnomalyLines: new Array<number>(nL).fill(NaN),
  };
  const n = order.length;
  const nus = takeFloat64(Math.max(1, n));
  const anomalies = new Int32Array(Math.max(1, n));
  anomalyLists(upd, anomalies, tallyPass(upd, order, start, gateNis, w, nus, anomalies), w);
  // anchors first (copies), then the links' own summaries (which reorder their innovations in place)
  const work = takeFloat64(Math.max(1, n));
  const anchorInnov: ValueSummary[] = [];
  for (let a = 0; a < nA; a++) {
    let m = 0;
    for (let L = 0; L < nL; L++) {
      if (w.la[L] === a) m = copySigned(nus, start[L], w.linkNuLength[L], w.lb[L] >= 0 ? -1 : 1, work, m);
      else if (w.lb[L] === a) m = copySigned(nus, start[L], w.linkNuLength[L], 1, work, m);
    }
    anchorInnov.push(summarizeFiniteInPlace(work.subarray(0, m), m));
  }
  const linkNisMean = new Float64Array(nL).fill(NaN);
  const linkInnov: ValueSummary[] = [];
  for (let L = 0; L < nL; L++) {
    if (w.linkNisCount[L] > 0) linkNisMean[L] = w.linkNisSum[L] / w.linkNisCount[L];
    const m = w.linkNuLength[L];
    linkInnov.push(summarizeFiniteInPlace(nus.subarray(start[L], start[L] + m), m));
  }
  giveBack(nus, work);
  return {
    linkOutliers: w.linkOutliers, linkRejected: w.linkRejected, linkNisMean, linkInnov, anchorInnov,
    anchorNisSum: w.anchorNisSum, anchorNisCount: w.anchorNisCount, anchorUpdates: w.anchorUpdates,
    anchorRejected: w.anchorRejected, anchorOutliers: w.anchorOutliers, linkAnomalyTimes: w.linkAnomalyTimes,
    linkAnomalyLines: w.linkAnomalyLines,
  };
}

/**
 * Analyse the UWB measurements of a log (see the file comment). Returns no block when the log has no TDOA or
 * range updates and no raw UWB records.
 * @param log what the reader produced
 * @param settings gate (outlier probability), maxDop (high-dop threshold), timeOffset_s, referenceOffset_m, familyAlpha
 * @param nisByChannel NIS per update from the consistency stage, by channel name (computed here when absent)
 * @param options geometry window
 */
export function analyzeUwb(
  log: NavLog,
  settings: AnalysisSettings,
  nisByChannel?: Map<string, Float64Array>,
  options: UwbOptions = {},
): StageOutput<UwbBlock> {
  const anchors = buildAnchorTable(log);
  const links: LinkTable = { keys: [], a: [], b: [], index: new Map() };
  const nisOf = (ch: Channel): Float64Array => nisByChannel?.get(ch.name) ?? computeNis(ch);
  const upd = collectUpdates(log, anchors, links, nisOf);
  const raw = collectRaw(log, anchors, links);
  if (upd.length === 0 && raw.length === 0) return { findings: [], series: [] };

  const findings: Finding[] = [];
  const series: Series[] = [];
  const nA = anchors.ids.length;
  const nL = links.keys.length;
  const gateNis = chi2Quantile(settings.gate, 1);
  const z = gateZ(settings.gate);
  const positions = anchors.positions;
  const hasTdoa = links.b.some((b) => b >= 0);
  const hasRange = links.b.some((b) => b < 0);
  const kind: UwbBlock['kind'] = hasTdoa && hasRange ? 'mixed' : hasTdoa ? 'tdoa' : 'range';

  // ---- 1. Updates per link and per anchor ----
  const updGroups = groupByLink(upd.link, upd.t_s, upd.length, nL);
  const updByLink = updGroups.lists;
  const {
    linkOutliers, linkRejected, linkNisMean, linkInnov, anchorInnov, anchorNisSum, anchorNisCount, anchorUpdates,
    anchorRejected, anchorOutliers, linkAnomalyTimes, linkAnomalyLines,
  } = tallyUpdates(upd, updGroups, links, nA, gateNis);

  // ---- 2. Residuals of raw records against truth and estimate ----
  // the truth track only when something reads it (raw records, fixes, or no estimate): building it scans the log
  let truthMade = false;
  let truthKept: Track | undefined;
  const truthOf = (): Track | undefined => {
    if (!truthMade) {
      truthKept = truthTrack(log, settings);
      truthMade = true;
    }
    return truthKept;
  };
  const estimate = estimateTrack(log);
  // The bridged gap of each track is computed once (it takes a median over the track).
  const gapOf = new Map<Track, number>();
  const interpolate = (track: Track, tq: ArrayLike<number>): ReturnType<typeof interpolateTrack> => {
    let gap = gapOf.get(track);
    if (gap === undefined) {
      gap = maxBridgedGap_s(track);
      gapOf.set(track, gap);
    }
    return interpolateTrack(track, tq, gap);
  };
  const rawByLink = indicesByLink(raw.link, raw.t_s, raw.length, nL);
  const residualAgainst = (track: Track | undefined): Float64Array | undefined => {
    if (!track || raw.length === 0) return undefined;
    const at = interpolate(track, raw.t_s.subarray(0, raw.length));
    const res = new Float64Array(raw.length).fill(NaN);
    for (let k = 0; k < raw.length; k++) {
      const p: Vec3_m = [at.x[k], at.y[k], at.z[k]];
      if (!p.every(Number.isFinite)) continue;
      const L = raw.link[k];
      const sa = positions[links.a[L]];
      if (!sa) continue;
      if (links.b[L] >= 0) {
        const sb = positions[links.b[L]];
        if (!sb) continue;
        res[k] = raw.value_m[k] - predictedTdoa_m(p, sa, sb);
      } else res[k] = raw.value_m[k] - predictedRange_m(p, sa);
    }
    return res;
  };
  const resTruth = raw.length > 0 ? residualAgainst(truthOf()) : undefined;
  const resEst = residualAgainst(estimate);
  const linkValues = (res: Float64Array | undefined, L: number): number[] => {
    const out: number[] = [];
    if (res) for (const k of rawByLink[L]) if (Number.isFinite(res[k])) out.push(res[k]);
    return out;
  };
  const anchorOriented = (res: Float64Array | undefined): number[][] => {
    const out: number[][] = Array.from({ length: nA }, () => []);
    if (!res) return out;
    for (let L = 0; L < nL; L++) {
      for (const k of rawByLink[L]) {
        const r = res[k];
        if (!Number.isFinite(r)) continue;
        if (links.b[L] >= 0) {
          out[links.b[L]].push(r);
          out[links.a[L]].push(-r);
        } else out[links.a[L]].push(r);
      }
    }
    return out;
  };
  const linkResTruth = Array.from({ length: nL }, (_, L) => summarizeValues(linkValues(resTruth, L)));
  const linkResEst = Array.from({ length: nL }, (_, L) => summarizeValues(linkValues(resEst, L)));
  const anchorResTruth = anchorOriented(resTruth).map((v) => summarizeValues(v));
  const anchorResEst = anchorOriented(resEst).map((v) => summarizeValues(v));
  const anchorMeasurements = new Int32Array(nA);
  for (let L = 0; L < nL; L++) {
    anchorMeasurements[links.a[L]] += rawByLink[L].length;
    if (links.b[L] >= 0) anchorMeasurements[links.b[L]] += rawByLink[L].length;
  }

  // ---- 3. Evidence, blame and offsets ----
  let evidence: UwbBlock['evidence'] = 'none';
  const linkEvidence: LinkEvidence[] = [];
  if (upd.length > 0) {
    evidence = 'updates';
    for (let L = 0; L < nL; L++) {
      linkEvidence.push({ a: links.a[L], b: links.b[L], n: updByLink[L].length, anomalies: linkOutliers[L] + linkRejected[L] });
    }
  } else {
    const res = resTruth && linkResTruth.some((s) => s.count > 0) ? resTruth : resEst;
    const sums = res === resTruth ? linkResTruth : linkResEst;
    if (res && sums.some((s) => s.count > 0)) {
      evidence = res === resTruth ? 'residuals-vs-truth' : 'residuals-vs-estimate';
      const scale = median(sums.filter((s) => s.count >= 3 && s.mad !== undefined).map((s) => MAD_TO_SIGMA * (s.mad as number)));
      for (let L = 0; L < nL; L++) {
        const med = sums[L].median ?? NaN;
        let n = 0;
        let anomalies = 0;
        for (const k of rawByLink[L]) {
          const r = res[k];
          if (!Number.isFinite(r)) continue;
          n++;
          if (scale > 0 && Math.abs(r - med) > z * scale) {
            anomalies++;
            linkAnomalyTimes[L].push(raw.t_s[k]);
            if (Number.isNaN(linkAnomalyLines[L])) linkAnomalyLines[L] = raw.line[k];
          }
        }
        linkEvidence.push({ a: links.a[L], b: links.b[L], n, anomalies });
      }
    }
  }
  const blame = linkEvidence.length > 0 ? blameAnchors(linkEvidence, settings.gate, settings.familyAlpha) : undefined;
  const totalAnomalies = linkEvidence.reduce((s, l) => s + l.anomalies, 0);

  // Offsets: truth residuals, else innovations, else estimate residuals.
  let offsetSource: 'truth' | 'innovation' | 'estimate' | undefined;
  let offsetLinks: ValueSummary[] | undefined;
  if (linkResTruth.some((s) => s.count >= 2)) {
    offsetSource = 'truth';
    offsetLinks = linkResTruth;
  } else if (linkInnov.some((s) => s.count >= 2)) {
    offsetSource = 'innovation';
    offsetLinks = linkInnov;
  } else if (linkResEst.some((s) => s.count >= 2)) {
    offsetSource = 'estimate';
    offsetLinks = linkResEst;
  }
  const means: LinkMean[] = [];
  if (offsetLinks) {
    offsetLinks.forEach((s, L) => {
      if (s.count >= 2 && s.mean !== undefined && s.meanSigma !== undefined) means.push({ a: links.a[L], b: links.b[L], mean: s.mean, sigma: s.meanSigma });
    });
  }
  const offsets = means.length > 0 ? estimateOffsets(means, nA) : undefined;
  const spread = offsetLinks
    ? median(offsetLinks.filter((s) => s.count >= 3 && s.mad !== undefined).map((s) => MAD_TO_SIGMA * (s.mad as number)))
    : NaN;

  // ---- Anchor reports, suspects ----
  const anchorReports: UwbAnchorReport[] = [];
  for (let a = 0; a < nA; a++) {
    const nu = anchorInnov[a];
    const rep: UwbAnchorReport = {
      id: anchors.ids[a],
      ...(positions[a] ? { p: [positions[a]![0], positions[a]![1], positions[a]![2]] as [number, number, number] } : {}),
      updates: anchorUpdates[a],
      rejected: anchorRejected[a],
      nis: anchorNisCount[a] > 0 ? { mean: anchorNisSum[a] / anchorNisCount[a] } : {},
      outliers: anchorOutliers[a],
      ...(nu.count > 0 ? { innovationMean: nu.mean, innovationStd: nu.std, median: nu.median, mad: nu.mad } : {}),
      measurements: anchorMeasurements[a],
      ...(anchorResTruth[a].count > 0 ? { residualMean: anchorResTruth[a].mean, residual: toReport(anchorResTruth[a]) } : {}),
      ...(anchorResEst[a].count > 0 ? { residualVsEstimate: toReport(anchorResEst[a]) } : {}),
      suspect: false,
    };
    if (offsets && offsetSource && Number.isFinite(offsets.value[a]) && Number.isFinite(offsets.sigma[a])) {
      rep.offset = { value: offsets.value[a], sigma: offsets.sigma[a], source: offsetSource, relative: offsets.relative };
    }
    if (blame && totalAnomalies > 0) {
      let mine = 0;
      linkEvidence.forEach((l, L) => {
        if (links.a[L] === a || links.b[L] === a) mine += l.anomalies;
      });
      rep.anomalyShare = mine / totalAnomalies;
    }
    anchorReports.push(rep);
  }

  const unit = evidence === 'updates' ? 'updates' : 'measurements';
  const anomalyWord = evidence === 'updates' ? 'outliers or rejections' : 'residuals beyond the gate';
  if (blame) {
    for (const [a, info] of blame.blamed) {
      const rep = anchorReports[a];
      let n = 0;
      let k = 0;
      for (const L of info.links) {
        n += linkEvidence[L].n;
        k += linkEvidence[L].anomalies;
      }
      const names = info.links.map((L) => links.keys[L]).join(', ');
      const what = links.b[info.links[0]] >= 0 ? (info.links.length > 1 ? 'pairs' : 'pair') : 'range link';
      let reason: string;
      if (info.tiedWith !== undefined) {
        reason = `${what} ${names} has ${k} ${anomalyWord} in ${n} ${unit} (${fmt((100 * k) / Math.max(1, n))}%, baseline ${fmt(100 * blame.baselineRate)}%), and anchors ${anchors.ids[a]} and ${anchors.ids[info.tiedWith]} take part in no other bad pair: either may be at fault`;
      } else {
        reason = `anchor ${anchors.ids[a]} is common to the ${what} with excess ${anomalyWord} (${names}): ${k} in ${n} ${unit} (${fmt((100 * k) / Math.max(1, n))}%, baseline ${fmt(100 * blame.baselineRate)}%)` +
          (info.links.length < info.linksOfAnchor ? `; ${info.linksOfAnchor - info.links.length} of its other links are clean` : '');
      }
      rep.suspect = true;
      rep.reason = reason;
    }
  }
  if (offsets && offsetSource) {
    for (const rep of anchorReports) {
      const o = rep.offset;
      if (!o || !isBiased(o.value, o.sigma, settings.gate, spread)) continue;
      const text = `its ${o.relative ? 'relative ' : ''}offset from ${offsetSource === 'truth' ? 'residuals against ground truth' : offsetSource === 'innovation' ? 'innovation means' : 'residuals against the estimate'} is ${o.value >= 0 ? '+' : ''}${fmt(o.value)} m +- ${fmt(o.sigma, 2)} m (${fmt(Math.abs(o.value) / o.sigma, 3)} sigma; typical spread ${fmt(spread)} m)`;
      rep.reason = rep.suspect ? `${rep.reason}; ${text}` : text;
      rep.suspect = true;
    }
  }

  // ---- Pair (link) reports ----
  const pairReports: UwbPairReport[] = [];
  for (let L = 0; L < nL; L++) {
    const s = linkInnov[L];
    pairReports.push({
      id: links.keys[L],
      i: anchors.ids[links.a[L]],
      j: links.b[L] >= 0 ? anchors.ids[links.b[L]] : '',
      updates: updByLink[L].length,
      rejected: linkRejected[L],
      nis: Number.isFinite(linkNisMean[L]) ? { mean: linkNisMean[L] } : {},
      outliers: linkOutliers[L],
      ...(s.count > 0 ? { innovationMean: s.mean, innovationStd: s.std, median: s.median, mad: s.mad } : {}),
      measurements: rawByLink[L].length,
      ...(linkResTruth[L].count > 0 ? { residualMean: linkResTruth[L].mean, residual: toReport(linkResTruth[L]) } : {}),
      ...(linkResEst[L].count > 0 ? { residualVsEstimate: toReport(linkResEst[L]) } : {}),
      excessAnomalies: blame ? blame.bad[L] : false,
      anomalies: linkEvidence[L]?.anomalies ?? 0,
    });
  }

  // ---- Suspect findings ----
  const channelOfLink = (L: number): string | undefined => {
    const k = updByLink[L][0];
    return k !== undefined ? upd.channels[upd.channel[k]].name : undefined;
  };
  anchorReports.forEach((rep, a) => {
    if (!rep.suspect) return;
    const mine = blame?.blamed.get(a)?.links ?? [];
    const times = mine.flatMap((L) => linkAnomalyTimes[L]);
    const lines = mine.map((L) => linkAnomalyLines[L]).filter(Number.isFinite);
    const f: Finding = {
      kind: 'suspect-anchor',
      severity: 'warning',
      id: rep.id,
      message: `Anchor ${rep.id} is suspect: ${rep.reason}.`,
    };
    if (times.length > 0) {
      f.t = times.reduce((m, x) => (x < m ? x : m), Infinity);
      f.tEnd = times.reduce((m, x) => (x > m ? x : m), -Infinity);
    }
    if (lines.length > 0) f.line = lines.reduce((m, x) => (x < m ? x : m), Infinity);
    const ch = mine.length > 0 ? channelOfLink(mine[0]) : undefined;
    if (ch) f.channel = ch;
    if (rep.offset) f.size = rep.offset.value;
    if (rep.anomalyShare !== undefined) f.score = rep.anomalyShare;
    findings.push(f);
  });
  const unplaced = anchors.ids.filter((id, a) => !positions[a] && (anchorUpdates[a] > 0 || anchorMeasurements[a] > 0));
  if (unplaced.length > 0) {
    findings.push({
      kind: 'note',
      severity: 'warning',
      message: `UWB measurements name anchor${unplaced.length > 1 ? 's' : ''} ${unplaced.join(', ')} but no position is known for ${unplaced.length > 1 ? 'them' : 'it'} (give an anchors file with --anchors, the mapping file, or "# anchor <id>: x y z" metadata); residuals, geometry and fixes leave ${unplaced.length > 1 ? 'them' : 'it'} out.`,
    });
  }

  // ---- 5. Fixes (before geometry, which may need them for a position) ----
  const truthAt = (track: Track | undefined, t: ArrayLike<number>): { x: Float64Array; y: Float64Array; z: Float64Array } | undefined =>
    track ? interpolate(track, t) : undefined;
  const fixes = fixTrack(raw, links, positions, rawByLink, (t) => {
    if (!estimate) return undefined;
    const q = interpolate(estimate, [t]);
    const p: Vec3_m = [q.x[0], q.y[0], q.z[0]];
    return p.every(Number.isFinite) ? p : undefined;
  });
  const multilateration: UwbBlock['multilateration'] = { epochs: fixes.epochs, fixes: fixes.length, refitted: fixes.refitted, rejected: fixes.rejected };
  if (fixes.length > 0) {
    multilateration.medianResidual = median(fixes.rms_m);
    const rmse = (ref: ReturnType<typeof truthAt>, dims: number): number | undefined => {
      if (!ref) return undefined;
      let s = 0;
      let n = 0;
      for (let k = 0; k < fixes.length; k++) {
        const dx = fixes.x[k] - ref.x[k];
        const dy = fixes.y[k] - ref.y[k];
        const dz = dims === 3 ? fixes.z[k] - ref.z[k] : 0;
        const e2 = dx * dx + dy * dy + dz * dz;
        if (!Number.isFinite(e2)) continue;
        s += e2;
        n++;
      }
      return n > 0 ? Math.sqrt(s / n) : undefined;
    };
    const tq = fixes.t_s;
    const atTruth = truthAt(truthOf(), tq);
    const atEst = truthAt(estimate, tq);
    const r3 = rmse(atTruth, 3);
    const r2 = rmse(atTruth, 2);
    const re = rmse(atEst, 3);
    if (r3 !== undefined) multilateration.rmseVsTruth = r3;
    if (r2 !== undefined) multilateration.rmse2dVsTruth = r2;
    if (re !== undefined) multilateration.rmseVsEstimate = re;
    for (const [axis, col] of [['x', fixes.x], ['y', fixes.y], ['z', fixes.z]] as const) {
      series.push({ key: `uwb/fix/${axis}`, group: 'trajectory', label: `UWB fix ${axis} (measurements only)`, unit: 'm', x: tq, y: col });
    }
    if (atTruth) {
      const err = new Float64Array(fixes.length);
      for (let k = 0; k < fixes.length; k++) err[k] = Math.hypot(fixes.x[k] - atTruth.x[k], fixes.y[k] - atTruth.y[k], fixes.z[k] - atTruth.z[k]);
      series.push({ key: 'uwb/fix/rms', group: 'uwb', label: 'UWB fix residual RMS', unit: 'm', x: tq, y: fixes.rms_m });
      series.push({ key: 'uwb/fix/errorVsTruth', group: 'uwb', label: 'UWB fix error against ground truth', unit: 'm', x: tq, y: err });
      const finiteErr = Array.from(err).filter(Number.isFinite);
      if (finiteErr.length > 0) multilateration.medianErrorVsTruth = median(finiteErr);
    }
  }

  // ---- 4. Geometry ----
  const fixTrackAsTrack: Track | undefined = fixes.length > 0 ? { t_s: fixes.t_s, x: fixes.x, y: fixes.y, z: fixes.z, length: fixes.length } : undefined;
  const truth = estimate ? undefined : truthOf();
  const positionTrack = estimate ?? truth ?? fixTrackAsTrack;
  const positionName: UwbBlock['dop']['position'] = estimate ? 'estimate' : truth ? 'truth' : fixTrackAsTrack ? 'fix' : undefined;
  const model = hasTdoa ? 'tdoa' : 'range';
  const geometry = geometryWindows(
    [
      { t_s: upd.t_s, link: upd.link, length: upd.length },
      { t_s: raw.t_s, link: raw.link, length: raw.length },
    ],
    links,
    positions,
    model,
    (t) => (positionTrack ? interpolate(positionTrack, t) : { x: new Float64Array(t.length).fill(NaN), y: new Float64Array(t.length).fill(NaN), z: new Float64Array(t.length).fill(NaN) }),
    options.window_s ?? UWB_WINDOW_S,
    settings.maxDop,
  );
  const dop: UwbBlock['dop'] = {
    kind: 'PDOP',
    model: model === 'tdoa' ? 'tdoa-correlated' : 'range',
    window_s: geometry?.window_s ?? options.window_s ?? UWB_WINDOW_S,
    windows: geometry?.summary.windows ?? 0,
    undefined: geometry?.summary.undefined ?? 0,
    tooFewAnchors: geometry?.summary.tooFewAnchors ?? 0,
    aboveThreshold: geometry?.summary.aboveThreshold ?? 0,
    threshold: settings.maxDop,
    noPosition: geometry?.summary.noPosition ?? 0,
    ...(positionName ? { position: positionName } : {}),
  };
  if (geometry?.summary.median !== undefined) dop.median = geometry.summary.median;
  if (geometry?.summary.max !== undefined) dop.max = geometry.summary.max;
  if (geometry) {
    const need = model === 'tdoa' ? 4 : 3;
    const perKind = new Map<string, number>();
    for (const iv of geometry.intervals) {
      const count = (perKind.get(iv.kind) ?? 0) + 1;
      perKind.set(iv.kind, count);
      if (count > MAX_GEOMETRY_FINDINGS) continue;
      if (iv.kind === 'too-few-anchors') {
        findings.push({
          kind: 'too-few-anchors',
          severity: 'warning',
          t: iv.t_s,
          tEnd: iv.tEnd_s,
          score: iv.minHeard,
          message: `Only ${iv.minHeard} anchor${iv.minHeard === 1 ? '' : 's'} with a known position heard in a ${fmt(geometry.window_s)} s window between t = ${fmt(iv.t_s, 10)} and ${fmt(iv.tEnd_s, 10)} s; a 3-D ${model === 'tdoa' ? 'TDOA fix needs 4 (3 independent differences)' : 'range fix needs 3'}.`,
        });
      } else {
        findings.push({
          kind: 'high-dop',
          severity: 'warning',
          t: iv.t_s,
          tEnd: iv.tEnd_s,
          ...(iv.maxDop !== undefined ? { score: iv.maxDop } : {}),
          message: `Anchor geometry is weak between t = ${fmt(iv.t_s, 10)} and ${fmt(iv.tEnd_s, 10)} s: ` +
            (iv.maxDop !== undefined ? `PDOP up to ${fmt(iv.maxDop)} (threshold ${fmt(settings.maxDop)})` : 'PDOP undefined') +
            (iv.singular > 0 ? `, ${iv.singular} window${iv.singular === 1 ? '' : 's'} with singular geometry` : '') +
            `; ${need} or more anchors were heard but they do not constrain the position well.`,
        });
      }
    }
    for (const [k, count] of perKind) {
      if (count <= MAX_GEOMETRY_FINDINGS) continue;
      const last = [...findings].reverse().find((f) => f.kind === k);
      if (last) last.message += ` (${count - MAX_GEOMETRY_FINDINGS} more ${k} intervals not listed)`;
    }
    series.push({ key: 'uwb/dop', group: 'uwb', label: `PDOP (${model === 'tdoa' ? 'TDOA, correlated differences' : 'ranges'})`, unit: '1', x: geometry.center_s, y: geometry.dop });
    series.push({ key: 'uwb/anchorsHeard', group: 'uwb', label: 'Anchors heard per window', unit: '1', x: geometry.center_s, y: geometry.heard });
  }

  // ---- Series: residuals per link, innovations per link, anchors ----
  // Columns made when first read (lazySeries.ts): a caller that wants only the report never pays for them.
  for (let L = 0; L < nL; L++) {
    const res = resTruth && linkResTruth[L].count > 0 ? resTruth : resEst && linkResEst[L].count > 0 ? resEst : undefined;
    if (res) {
      const idx = rawByLink[L];
      series.push(lazySeries({
        key: `uwb/residual/${links.keys[L]}`,
        group: 'uwb',
        label: `${links.b[L] >= 0 ? 'Pair' : 'Anchor'} ${links.keys[L]} residual against ${res === resTruth ? 'ground truth' : 'the estimate'}`,
        unit: 'm',
      }, { x: () => gather(raw.t_s, idx), y: () => gather(res, idx), line: () => gather(raw.line, idx) }));
    }
    const idx = updByLink[L];
    if (idx.length > 0) {
      series.push(lazySeries({
        key: `uwb/innovation/${links.keys[L]}`,
        group: 'uwb',
        label: `${links.b[L] >= 0 ? 'Pair' : 'Anchor'} ${links.keys[L]} innovation`,
        unit: 'm',
      }, { x: () => gather(upd.t_s, idx), y: () => gather(upd.nu, idx), line: () => gather(upd.line, idx) }));
    }
  }
  const placed = anchors.ids.map((id, a) => ({ id, p: positions[a] })).filter((x): x is { id: string; p: Vec3_m } => x.p !== undefined);
  if (placed.length > 0) {
    const ned = log.frame === 'NED';
    series.push({
      key: 'uwb/anchors',
      group: 'trajectory',
      label: `UWB anchors ${placed.map((x) => x.id).join(', ')} (x = east, y = north)`,
      unit: 'm',
      x: Float64Array.from(placed, (x) => (ned ? x.p[1] : x.p[0])),
      y: Float64Array.from(placed, (x) => (ned ? x.p[0] : x.p[1])),
    });
  }

  const block: UwbBlock = {
    kind,
    channels: upd.channels.map((c) => c.name),
    gateNis,
    evidence,
    ...(blame ? { baselineAnomalyRate: blame.baselineRate } : {}),
    anchors: anchorReports,
    pairs: pairReports.filter((p) => p.j !== ''),
    anchorsWithoutPosition: unplaced,
    dop,
    multilateration,
  };
  return { block, findings, series };
}

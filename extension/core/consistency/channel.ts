/**
 * Consistency of one measurement channel: NIS figures, outliers beyond the gate, the corrected windowed test,
 * whiteness, innovation bias, the NIS distribution and covariance health, with the panel's series.
 *
 * Conventions: `updates` counts every update record of the channel (and of each id); `rejected` counts those the
 * estimator rejected. Rejected updates are left out of every other figure, of the findings and of `worst`.
 * NIS values that cannot be computed (nothing logged) are left out too and counted in `nis.missing`.
 * Methods and corrections are described in docs/consistency.md.
 */
import type { Channel } from '../model';
import type { ChannelById, ChannelReport, Finding, WorstEntry } from '../report';
import type { AnalysisSettings } from '../settings';
import type { Series } from '../series';
import { finiteJson } from '../finite';
import { chi2Interval, chi2Quantile, chi2Sf } from '../stats/chi2';
import { oneSampleTTest } from '../stats/ttest';
import { twoSidedNormalQuantile } from '../stats/autocorrelation';
import { hasFullS, nisOfUpdate, wrappedInnovations, NIS_BAD_COVARIANCE, NIS_FROM_LOG, NIS_MISSING } from './nis';
import { TopK } from './topK';
import { insideShareFromPrefix, prefixSums, slidingAverage, windowTestFromPrefix, type WindowSpec } from './window';
import { giveBack, takeFloat64, takeInt32 } from '../scratch';
import { whiteness } from './whiteness';
import { HISTOGRAM_BINS, histogramBinWidth, nisHistogramFromCounts, nisKsTest } from './histogram';
import { covarianceHealth } from './covariance';
import { formatNumber, formatPercent } from './format';
import { lazySeries } from '../lazySeries';
import { segmentBreaks } from '../resets/segments';

/** Outlier findings listed per channel; beyond it they are counted in the last one's message. */
export const MAX_OUTLIER_FINDINGS = 500;

/** Everything one channel contributes. */
export interface ChannelAnalysis {
  report: ChannelReport;
  findings: Finding[];
  series: Series[];
  /** This channel's candidates for `worst` (its largest NIS), p computed, unsorted across channels. */
  worst: WorstEntry[];
  /** NIS of every update (rejected ones included; NaN where not computable). */
  nis: Float64Array;
}

/** The window the settings ask for, or undefined when neither size is positive. */
export function windowSpec(settings: AnalysisSettings): WindowSpec | undefined {
  if (settings.windowUpdates !== undefined && settings.windowUpdates >= 1) {
    return { kind: 'updates', size: Math.floor(settings.windowUpdates) };
  }
  if (settings.window_s > 0 && Number.isFinite(settings.window_s)) return { kind: 'seconds', size: settings.window_s };
  return undefined;
}

/** NIS count, mean and share inside the per-update 95% bounds of each segment of the accepted updates. */
function nisSegments(
  tC: Float64Array, nis: Float64Array, idxC: Int32Array, m: number, breaks: readonly number[], lo95: number, hi95: number,
):
  { t: number; tEnd: number; count: number; mean?: number; inside95?: number }[] {
  const cuts = [0, ...breaks, m];
  const out: { t: number; tEnd: number; count: number; mean?: number; inside95?: number }[] = [];
  for (let c = 0; c + 1 < cuts.length; c++) {
    const a = cuts[c], b = cuts[c + 1];
    if (b <= a) continue;
    let sum = 0, inside = 0;
    for (let q = a; q < b; q++) {
      const v = nis[idxC[q]];
      sum += v;
      if (v >= lo95 && v <= hi95) inside++;
    }
    out.push({ t: tC[a], tEnd: tC[b - 1], count: b - a, mean: sum / (b - a), inside95: inside / (b - a) });
  }
  return out;
}

function finiteOrNull(x: number): number | null {
  return Number.isFinite(x) ? x : null;
}

/**
 * Analyse one channel (see the file comment). Never throws on bad data. `resets_s` (the run's filter restarts,
 * seconds) split the windowed NIS test and the whiteness figures into segments, and `nis.segments` gives the NIS
 * figures of each segment.
 */
export function analyzeChannel(channel: Channel, settings: AnalysisSettings, resets_s: readonly number[] = []): ChannelAnalysis {
  const { name, dof, length: n } = channel;
  const findings: Finding[] = [];
  const series: Series[] = [];
  if (!(dof >= 1) || n === 0) {
    const report: ChannelReport = { name, dof, updates: n, rejected: countRejected(channel), outliers: 0, nis: { dof } };
    return { report, findings, series, worst: [], nis: new Float64Array(n).fill(NaN) };
  }
  const nu = wrappedInnovations(channel);
  const t = channel.t_s;
  const lineCol = channel.line;
  const ids = channel.ids;
  const nIds = ids.length;

  const gateValue = chi2Quantile(settings.gate, dof);
  const [lo95, hi95] = chi2Interval(0.95, dof);

  const binWidth = histogramBinWidth(dof);
  const scan = scanUpdates(channel, nu, gateValue, lo95, hi95, settings.maxWorst, binWidth);
  const { nis, m, tC, idxC, sum, inside, outliers, outlierIdx, fromLog, missing, rejected, top } = scan;
  const { idUpdates, idRejected, idCount, idSum, idInside, idOutliers } = scan;
  const { compCount, compMean, compM2, idNuSum, idNuCount, nuW, zW, tW, mW } = scan;

  const accepted = n - rejected;
  const nisSummary: ChannelReport['nis'] = {
    dof,
    count: m,
    bounds95: [lo95, hi95],
    gate: gateValue,
    ...(m > 0 ? { mean: sum / m, inside95: inside / m } : {}),
    ...(fromLog > 0 ? { fromLog } : {}),
    ...(missing > 0 ? { missing } : {}),
  };
  const report: ChannelReport = { name, dof, updates: n, rejected, outliers, nis: nisSummary };
  if (accepted === 0) report.note = 'every update of this channel was rejected by the estimator';

  // Outlier findings. Their tail probabilities are kept by update for `worst` below (mostly the same updates; each
  // chi-square tail costs microseconds).
  const tailOf = new Map<number, number>();
  const gateText = `${formatPercent(settings.gate)} gate (${formatNumber(gateValue, 3)}) for ${dof} dof`;
  for (let q = 0; q < outlierIdx.length; q++) {
    const i = outlierIdx[q];
    const id = idOf(channel, i);
    const p = chi2Sf(nis[i], dof);
    tailOf.set(i, p);
    const f: Finding = {
      kind: 'outlier',
      t: t[i],
      line: lineCol[i],
      file: channel.file,
      channel: name,
      ...(id !== undefined ? { id } : {}),
      score: nis[i],
      p,
      severity: 'warning',
      message: `NIS ${formatNumber(nis[i])} is beyond the ${gateText}`,
    };
    if (q === outlierIdx.length - 1 && outliers > outlierIdx.length) {
      f.message += ` (${outliers - outlierIdx.length} more outliers in ${name} not listed)`;
    }
    findings.push(f);
  }

  // Worst candidates of this channel.
  const best = top.result();
  const worst: WorstEntry[] = best.items.map((i, r) => {
    const id = idOf(channel, i);
    return {
      t: t[i], line: lineCol[i], channel: name, ...(id !== undefined ? { id } : {}),
      score: best.keys[r], p: tailOf.get(i) ?? chi2Sf(best.keys[r], dof), // keys[r] is nis[i]
    };
  });

  // Per segment (between filter restarts): NIS figures; the windows below never straddle a restart.
  const breaks = m > 0 && resets_s.length > 0 ? segmentBreaks(tC, 0, m, resets_s) : [];
  if (breaks.length > 0) nisSummary.segments = nisSegments(tC, nis, idxC, m, breaks, lo95, hi95);

  // Windowed NIS.
  const spec = windowSpec(settings);
  if (spec && m > 0) {
    const prefix = scan.prefix;
    const tV = tC.subarray(0, m);
    // the summary now; the panel's per-update columns when the series is first read (lazySeries.ts), from prefix
    // sums of their own (the same values) so the scratch column above goes back now
    const slide = insideShareFromPrefix(tV, m, dof, spec, prefix, breaks);
    const test = windowTestFromPrefix(tV, m, dof, spec, settings.familyAlpha, prefix, breaks, scan.timesSorted);
    const confidence = settings.confidence;
    // The compacted columns above are work columns, given back below; the panel's columns are made from copies
    // of their own (the same selection: accepted updates with a finite NIS) when first read.
    let kept: { t: Float64Array; nis: Float64Array; idx: Int32Array } | undefined;
    const compacted = (): { t: Float64Array; nis: Float64Array; idx: Int32Array } => (kept ??= compactAccepted(channel, nis, m));
    let columns: ReturnType<typeof slidingAverage> | undefined;
    const slideColumns = (): ReturnType<typeof slidingAverage> => {
      const c = compacted();
      return (columns ??= slidingAverage(c.t, c.nis, m, dof, spec, confidence, prefixSums(c.nis, m), breaks));
    };
    series.push(lazySeries({ key: `nisWindow/${name}`, group: 'innovations', label: `${name} windowed NIS`, unit: '1' }, {
      x: () => compacted().t.slice(),
      y: () => slideColumns().mean,
      line: () => {
        const idx = compacted().idx;
        const lineW = new Float64Array(m);
        for (let q = 0; q < m; q++) lineW[q] = lineCol[idx[q]];
        return lineW;
      },
      lo: () => slideColumns().lo,
      hi: () => slideColumns().hi,
    }));
    const windowText = spec.kind === 'seconds' ? `${formatNumber(spec.size)} s` : `${spec.size} updates`;
    nisSummary.window = {
      ...(spec.kind === 'seconds' ? { size_s: spec.size } : { sizeUpdates: spec.size }),
      full: slide.full,
      ...(slide.full > 0 ? { inside95: slide.fullInside95 / slide.full } : {}),
      tests: test.tests,
      alphaPerTest: test.alphaPerTest,
      flagged: test.runs.length,
    };
    for (const r of test.runs) {
      const over = r.side === 'overconfident';
      const i0 = idxC[r.first];
      findings.push({
        kind: 'inconsistent',
        t: tC[r.first],
        tEnd: tC[r.last],
        line: lineCol[i0],
        file: channel.file,
        channel: name,
        side: r.side,
        score: r.mean,
        p: r.p,
        severity: 'warning',
        message:
          `Average NIS ${formatNumber(r.mean)} over ${r.count} updates lies ${over ? 'above' : 'below'} the corrected ` +
          `bound ${formatNumber(r.bound)} for ${dof} dof between t = ${formatNumber(tC[r.first])} s and ` +
          `${formatNumber(tC[r.last])} s (${r.windows} of ${test.tests} windows of ${windowText}; bounds corrected to a ` +
          `${formatPercent(settings.familyAlpha)} false-finding chance per channel): the filter is ` +
          (over ? 'overconfident here (S too small for the innovations)' : 'pessimistic here (S too large for the innovations)'),
      });
    }
  }

  giveBack(scan.prefix); // read by the windows only: the whiteness below reuses it

  // One copy of the time and line columns, shared by this channel's per-update series (never the log's own arrays),
  // made when a series is first read (lazySeries.ts).
  let shared: { x: Float64Array; line: Float64Array } | undefined;
  const sharedColumns = (): { x: Float64Array; line: Float64Array } => (shared ??= { x: t.slice(0, n), line: lineCol.slice(0, n) });
  const xAll = (): Float64Array => sharedColumns().x;
  const lineAll = (): Float64Array => sharedColumns().line;

  // NIS series with the per-update band.
  series.push(...nisSeries(channel, nis, rejected, settings.confidence, xAll, lineAll));

  // Innovations per component with +-z sqrt(S_cc).
  const z = twoSidedNormalQuantile(settings.confidence);
  let anyInnovation = false;
  for (let c = 0; c < dof; c++) if (compCount[c] > 0) anyInnovation = true;
  if (anyInnovation) {
    for (let c = 0; c < dof; c++) series.push(innovationSeries(channel, nu, c, z, xAll, lineAll));
  }

  // Innovation mean, std and the bias t-test (Bonferroni over components).
  if (anyInnovation) {
    const mean: (number | null)[] = [];
    const std: (number | null)[] = [];
    const pValues: (number | null)[] = [];
    for (let c = 0; c < dof; c++) {
      const cnt = compCount[c];
      const sd = cnt >= 2 ? Math.sqrt(compM2[c] / (cnt - 1)) : NaN;
      mean.push(cnt > 0 ? compMean[c] : null);
      std.push(finiteOrNull(sd));
      const tt = oneSampleTTest(compMean[c], sd, cnt);
      pValues.push(tt ? finiteOrNull(tt.p) : null);
      if (tt && tt.p < settings.familyAlpha / dof) {
        findings.push({
          kind: 'innovation-bias',
          channel: name,
          axis: c,
          size: compMean[c],
          score: tt.t,
          p: tt.p,
          severity: 'warning',
          ...(m > 0 ? { t: tC[0], tEnd: tC[m - 1] } : {}),
          message:
            `Innovation component ${c} of ${name} has mean ${formatNumber(compMean[c])} (std ${formatNumber(sd)}, ` +
            `t = ${formatNumber(tt.t)}) over ${cnt} updates; p = ${formatNumber(tt.p)} is below ` +
            `${formatPercent(settings.familyAlpha)}${dof > 1 ? ` / ${dof} components` : ''}: the measurement or its model is biased`,
        });
      }
    }
    report.innovationMean = mean;
    report.innovationStd = std;
    report.innovationMeanP = pValues;
  }

  // Whiteness, pooled within segments: no lag product pairs updates on both sides of a restart (whiteness.ts).
  const whiteBreaks = mW > 0 && resets_s.length > 0 ? segmentBreaks(tW, 0, mW, resets_s) : [];
  const white = whiteness(
    nuW.subarray(0, mW * dof), zW.subarray(0, mW * dof), mW, dof, settings.whitenessLags, whiteBreaks, settings.familyAlpha,
  );
  giveBack(nuW, zW, tW);
  if (white) {
    report.whiteness = {
      lags: white.lags,
      ljungBoxQ: white.ljungBoxQ,
      ljungBoxP: white.ljungBoxP,
      count: white.count,
      ...(dof > 1 ? { component: white.component, components: white.components } : {}),
      rho: Array.from(white.rho, finiteOrNull),
      rhoBound: Array.from(white.rhoBound, finiteOrNull),
      outside: white.outside,
      ...(white.segments > 1 ? { segments: white.segments } : {}),
      ...(white.permutations > 0 ? { permutations: white.permutations } : {}),
    };
    const lagsX = Float64Array.from({ length: white.lags }, (_, j) => j + 1);
    series.push({
      key: `acf/${name}`, group: 'innovations', label: `${name} normalized autocorrelation`, unit: '1',
      x: lagsX, y: white.rho, lo: white.rhoBound.map((b) => -b), hi: white.rhoBound,
    });
    if (white.ljungBoxP < settings.familyAlpha) {
      findings.push({
        kind: 'not-white',
        channel: name,
        score: white.ljungBoxQ,
        p: white.ljungBoxP,
        severity: 'warning',
        ...(m > 0 ? { t: tC[0], tEnd: tC[m - 1] } : {}),
        message:
          `Innovations of ${name} are not white: Ljung-Box Q = ${formatNumber(white.ljungBoxQ)} over ${white.lags} lags` +
          `${white.segments > 1 ? ` (within each of ${white.segments} segments between filter restarts)` : ''}` +
          `${dof > 1 ? ` (component ${white.component}, p corrected for ${dof} components)` : ''}, ` +
          `p = ${formatNumber(white.ljungBoxP)}${white.permutations > 0 ? ` (permutation test, ${white.permutations} reorderings)` : ''}` +
          ` < ${formatPercent(settings.familyAlpha)}; ` +
          `${white.outside} of ${white.lags} lags of the normalized autocorrelation lie outside +-1.96/sqrt(K)`,
      });
    }
  }

  // NIS distribution.
  const hist = nisHistogramFromCounts(scan.binCounts, scan.overflow, m, dof, binWidth);
  if (hist) {
    const ks = nisKsTest(nis, m, dof, idxC);
    nisSummary.histogram = hist;
    if (ks) nisSummary.ks = { d: ks.d, p: ks.p, n: ks.n, stride: ks.stride };
    const centers = Float64Array.from({ length: hist.counts.length }, (_, k) => 0.5 * (hist.edges[k] + hist.edges[k + 1]));
    series.push({
      key: `nisHistogram/${name}`, group: 'innovations', label: `${name} NIS density`, unit: '1',
      x: centers, y: Float64Array.from(hist.density),
    });
    series.push({
      key: `nisPdf/${name}`, group: 'innovations', label: `chi-square(${dof}) density`, unit: '1',
      x: centers.slice(), y: Float64Array.from(hist.pdf),
    });
  }

  // Covariance health.
  const health = covarianceHealth(channel, best.items.slice(0, 8));
  if (health) {
    report.covariance = {
      checked: health.checked,
      notSpd: health.notSpd,
      asymmetric: health.asymmetric,
      ...(health.incomplete > 0 ? { incomplete: health.incomplete } : {}),
      ...(health.minEigenvalue !== undefined ? { minEigenvalue: health.minEigenvalue } : {}),
      ...(health.maxCondition !== undefined ? { maxCondition: health.maxCondition } : {}),
      eigenSampled: health.eigenSampled,
    };
    health.runs.forEach((r, q) => {
      const what = r.notSpd > 0 && r.asymmetric > 0 ? 'not symmetric positive definite'
        : r.notSpd > 0 ? 'not positive definite' : 'not symmetric';
      const f: Finding = {
        kind: 'bad-covariance',
        t: t[r.first],
        ...(r.last > r.first ? { tEnd: t[r.last] } : {}),
        line: channel.line[r.first],
        file: channel.file,
        channel: name,
        severity: 'error',
        message: `Innovation covariance S of ${name} is ${what} at ${r.count} update${r.count > 1 ? 's' : ''}` +
          (r.last > r.first ? ` from line ${channel.line[r.first]} to line ${channel.line[r.last]}` : ` at line ${channel.line[r.first]}`),
      };
      if (q === health.runs.length - 1 && health.moreRuns > 0) f.message += ` (${health.moreRuns} more runs not listed)`;
      findings.push(f);
    });
  }

  // Per id.
  if (nIds > 0) {
    const byId: ChannelById[] = [];
    for (let k = 0; k < nIds; k++) {
      if (idUpdates[k] === 0) continue;
      const entry: ChannelById = {
        id: ids[k],
        updates: idUpdates[k],
        outliers: idOutliers[k],
        nis: idCount[k] > 0 ? { mean: idSum[k] / idCount[k], inside95: idInside[k] / idCount[k] } : {},
      };
      if (idRejected[k] > 0) entry.rejected = idRejected[k];
      if (anyInnovation) {
        const im: (number | null)[] = [];
        for (let c = 0; c < dof; c++) {
          const cnt = idNuCount[k * dof + c];
          im.push(cnt > 0 ? idNuSum[k * dof + c] / cnt : null);
        }
        entry.innovationMean = im;
      }
      byId.push(entry);
    }
    report.byId = byId;
  }

  giveBack(tC, idxC); // every reader above is done; the panel's series make their own copies
  return { report: finiteJson(report) as unknown as ChannelReport, findings, series, worst, nis };
}

/** `nis/<ch>` (rejected updates NaN) with the per-update band, and `nisRejected/<ch>` when any were rejected. */
function nisSeries(
  channel: Channel, nis: Float64Array, rejected: number, confidence: number, x: () => Float64Array, line: () => Float64Array,
): Series[] {
  const { name, dof, length: n } = channel;
  const rej = channel.rejected;
  let band: [number, number] | undefined; // two chi-square quantiles, only when the panel reads the band
  const out: Series[] = [lazySeries({ key: `nis/${name}`, group: 'innovations', label: `${name} NIS`, unit: '1' }, {
    x, y: () => {
      const y = new Float64Array(n);
      for (let i = 0; i < n; i++) y[i] = rej[i] ? NaN : nis[i];
      return y;
    },
    line,
    lo: () => new Float64Array(n).fill((band ??= chi2Interval(confidence, dof))[0]),
    hi: () => new Float64Array(n).fill((band ??= chi2Interval(confidence, dof))[1]),
  })];
  if (rejected > 0) {
    // The rejected updates' columns, made together when the panel first reads one of them.
    let columns: { x: Float64Array; y: Float64Array; line: Float64Array } | undefined;
    const rejectedColumns = (): { x: Float64Array; y: Float64Array; line: Float64Array } => {
      if (columns) return columns;
      const xr = new Float64Array(rejected);
      const yr = new Float64Array(rejected);
      const lr = new Float64Array(rejected);
      // from the log's own columns (the values the shared copies hold), so those copies stay lazy
      const tAll = channel.t_s, lineAll = channel.line;
      let q = 0;
      for (let i = 0; i < n; i++) if (rej[i]) { xr[q] = tAll[i]; yr[q] = nis[i]; lr[q] = lineAll[i]; q++; }
      return (columns = { x: xr, y: yr, line: lr });
    };
    out.push(lazySeries({ key: `nisRejected/${name}`, group: 'innovations', label: `${name} NIS (rejected)`, unit: '1' }, {
      x: () => rejectedColumns().x, y: () => rejectedColumns().y, line: () => rejectedColumns().line,
    }));
  }
  return out;
}

/** `innovation/<ch>/<c>` (rejected updates NaN) with the band +-z sqrt(S_cc) when S is logged. */
function innovationSeries(
  channel: Channel, nu: Float64Array, c: number, z: number, x: () => Float64Array, line: () => Float64Array,
): Series {
  const { name, dof, length: n, S } = channel;
  const rej = channel.rejected;
  const dd = dof * dof;
  const y = (): Float64Array => {
    const out = new Float64Array(n);
    for (let i = 0, o = c; i < n; i++, o += dof) out[i] = rej[i] ? NaN : nu[o];
    return out;
  };
  // The band +-z sqrt(S_cc): made once for lo and hi together, whichever is read first.
  let band: { lo: Float64Array; hi: Float64Array } | undefined;
  const makeBand = (cov: Float64Array): { lo: Float64Array; hi: Float64Array } => {
    if (band) return band;
    const lo = new Float64Array(n);
    const hi = new Float64Array(n);
    for (let i = 0, o = c * dof + c; i < n; i++, o += dd) {
      const v = cov[o];
      const half = v >= 0 ? z * Math.sqrt(v) : NaN;
      lo[i] = -half;
      hi[i] = half;
    }
    return (band = { lo, hi });
  };
  const cov = S !== undefined && S.length >= n * dd ? S : undefined;
  return lazySeries({
    key: `innovation/${name}/${c}`, group: 'innovations', label: `${name} innovation ${c}`,
    unit: channel.angleComponents[c] ? 'rad' : '',
  }, { x, y, line, ...(cov ? { lo: () => makeBand(cov).lo, hi: () => makeBand(cov).hi } : {}) });
}

/**
 * The accepted updates with a finite NIS, compacted (times, NIS and update index), as the channel scan selects
 * them: fresh arrays of `m` values for the panel's series.
 */
function compactAccepted(channel: Channel, nis: Float64Array, m: number): { t: Float64Array; nis: Float64Array; idx: Int32Array } {
  const t = new Float64Array(m);
  const v = new Float64Array(m);
  const idx = new Int32Array(m);
  const rej = channel.rejected;
  const time = channel.t_s;
  let q = 0;
  for (let i = 0; i < channel.length && q < m; i++) {
    if (rej[i] || !Number.isFinite(nis[i])) continue;
    t[q] = time[i];
    v[q] = nis[i];
    idx[q] = i;
    q++;
  }
  return { t, nis: v, idx };
}

/** What one pass over the updates gathers: NIS figures (accepted updates with a finite NIS, compacted) and innovations. */
interface UpdateScan {
  /** NIS of every update (rejected ones included; NaN where not computable), as computeNisDetailed gives. */
  nis: Float64Array;
  m: number;
  /** Compacted times and update indices (work columns of at least m values: give them back once read). */
  tC: Float64Array;
  idxC: Int32Array;
  sum: number;
  inside: number;
  outliers: number;
  outlierIdx: number[];
  fromLog: number;
  missing: number;
  rejected: number;
  top: TopK;
  idUpdates: Float64Array;
  idRejected: Float64Array;
  idCount: Float64Array;
  idSum: Float64Array;
  idInside: Float64Array;
  idOutliers: Float64Array;
  /** Welford count, mean and sum of squared deviations per innovation component. */
  compCount: Float64Array;
  compMean: Float64Array;
  compM2: Float64Array;
  idNuSum: Float64Array;
  idNuCount: Float64Array;
  /**
   * Accepted updates with every component (and S_cc) finite: raw and normalized innovations, compacted
   * (scratch columns: give them back once read).
   */
  nuW: Float64Array;
  zW: Float64Array;
  /** Times of those updates (scratch: give it back once read). */
  tW: Float64Array;
  mW: number;
  /** Whether tC[0..m) is non-decreasing without NaN. */
  timesSorted: boolean;
  /** Prefix sums of the compacted NIS (scratch, m + 1 values: give it back once read). */
  prefix: Float64Array;
  /** Histogram counts of the compacted NIS, bins of `binWidth` (HISTOGRAM_BINS), and the values beyond the last bin. */
  binCounts: Float64Array;
  overflow: number;
}

/**
 * One allocation-free pass over the NIS and the (angle-wrapped) innovations of a channel (kept to one loop: the
 * two passes it replaces each cost a warm-up of their own on a cold start).
 */
function scanUpdates(
  channel: Channel, nu: Float64Array, gateValue: number, lo95: number, hi95: number, maxWorst: number, binWidth: number,
): UpdateScan {
  const { dof, length: n, S } = channel;
  const dd = dof * dof;
  const hasS = S !== undefined && S.length >= n * dd;
  const t = channel.t_s;
  const rej = channel.rejected;
  const idCol = channel.id;
  const nIds = channel.ids.length;
  const idUpdates = new Float64Array(nIds);
  const idRejected = new Float64Array(nIds);
  const idCount = new Float64Array(nIds);
  const idSum = new Float64Array(nIds);
  const idInside = new Float64Array(nIds);
  const idOutliers = new Float64Array(nIds);
  const tC = takeFloat64(n);
  const idxC = takeInt32(n);
  const top = new TopK(Math.max(0, maxWorst));
  const outlierIdx: number[] = [];
  const compCount = new Float64Array(dof);
  const compMean = new Float64Array(dof);
  const compM2 = new Float64Array(dof);
  const idNuSum = new Float64Array(nIds * dof);
  const idNuCount = new Float64Array(nIds * dof);
  const nuW = takeFloat64(n * dof);
  const zW = takeFloat64(n * dof);
  const tW = takeFloat64(n);
  const nis = new Float64Array(n);
  const work = new Float64Array(dd + dof);
  const haveS = hasFullS(channel);
  const prefix = takeFloat64(n + 1);
  prefix[0] = 0;
  const bins = HISTOGRAM_BINS;
  const binCounts = new Float64Array(bins);
  let overflow = 0;
  let timesSorted = true;
  let lastT = -Infinity;
  let mW = 0;
  let m = 0;
  let rejected = 0;
  let sum = 0;
  let inside = 0;
  let outliers = 0;
  let fromLog = 0;
  let missing = 0;
  for (let i = 0; i < n; i++) {
    const from = nisOfUpdate(channel, nu, haveS, i, work, nis); // of rejected updates too
    const idv = idCol[i];
    const k = idv >= 0 && idv < nIds ? idv | 0 : -1;
    if (k >= 0) idUpdates[k]++;
    if (rej[i]) {
      rejected++;
      if (k >= 0) idRejected[k]++;
      continue;
    }
    // NIS figures.
    const v = nis[i];
    if (Number.isFinite(v)) {
      const ti = t[i];
      if (!(ti >= lastT)) timesSorted = false; // also for a NaN time
      lastT = ti;
      tC[m] = ti;
      idxC[m] = i;
      prefix[m + 1] = prefix[m] + v;
      m++;
      const b = Math.floor(v / binWidth);
      if (b >= bins) overflow++;
      else if (b >= 0) binCounts[b]++;
      sum += v;
      const isInside = v >= lo95 && v <= hi95;
      if (isInside) inside++;
      const isOutlier = v > gateValue;
      if (isOutlier) {
        outliers++;
        if (outlierIdx.length < MAX_OUTLIER_FINDINGS) outlierIdx.push(i);
      }
      if (k >= 0) {
        idCount[k]++;
        idSum[k] += v;
        if (isInside) idInside[k]++;
        if (isOutlier) idOutliers[k]++;
      }
      top.push(v, i);
      if (from === NIS_FROM_LOG || from === NIS_BAD_COVARIANCE) fromLog++;
    } else if (from === NIS_MISSING || from === NIS_BAD_COVARIANCE) {
      missing++;
    }
    // Innovations.
    const o = i * dof;
    let all = true;
    for (let c = 0; c < dof; c++) {
      const x = nu[o + c];
      if (!Number.isFinite(x)) { all = false; continue; }
      const cnt = ++compCount[c];
      const d = x - compMean[c];
      compMean[c] += d / cnt;
      compM2[c] += d * (x - compMean[c]);
      if (k >= 0) { idNuSum[k * dof + c] += x; idNuCount[k * dof + c]++; }
    }
    if (!all) continue;
    let normOk = true;
    const w = mW * dof;
    for (let c = 0; c < dof; c++) {
      const x = nu[o + c];
      nuW[w + c] = x;
      if (hasS) {
        const s = S[i * dd + c * dof + c];
        if (!(s > 0) || !Number.isFinite(s)) { normOk = false; break; }
        zW[w + c] = x / Math.sqrt(s);
      } else {
        zW[w + c] = x;
      }
    }
    if (normOk) { tW[mW] = t[i]; mW++; }
  }
  return {
    m, tC, idxC, sum, inside, outliers, outlierIdx, fromLog, missing, rejected, top,
    idUpdates, idRejected, idCount, idSum, idInside, idOutliers,
    compCount, compMean, compM2, idNuSum, idNuCount, nuW, zW, tW, mW, prefix, binCounts, overflow, nis, timesSorted,
  };
}

function idOf(channel: Channel, i: number): string | undefined {
  const v = channel.id[i];
  return v >= 0 && v < channel.ids.length ? channel.ids[v | 0] : undefined;
}

function countRejected(channel: Channel): number {
  let r = 0;
  for (let i = 0; i < channel.length; i++) if (channel.rejected[i]) r++;
  return r;
}

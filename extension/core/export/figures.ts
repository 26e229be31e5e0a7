/**
 * The rows of figures and findings both exported forms carry (HTML and Markdown), taken from a report: one place
 * decides what a reader of an exported report sees, the two renderers only format it. Cells are plain text (the
 * renderers escape them).
 */
import type { Report } from '../report';
import type { Series } from '../series';
import type { ChartSpec } from './svg';
import { fmtNum, fmtPct } from './escape';

/** A titled table of plain-text cells. */
export interface TextTable {
  title: string;
  header: string[];
  rows: string[][];
  /** Rows left out (the table shows the first ones). */
  omitted?: number;
}

function obj(v: unknown): Record<string, unknown> | undefined {
  return v !== null && typeof v === 'object' && !Array.isArray(v) ? (v as Record<string, unknown>) : undefined;
}

/** The identity lines of a report: which tool, which input (name and hash), which settings. */
export function identityRows(r: Report): string[][] {
  const s = r.settings;
  const span = Array.isArray(s.span_s) ? ` (analysed span ${fmtNum(s.span_s[0])} .. ${fmtNum(s.span_s[1])} s)` : '';
  return [
    ['tool', `Residuum ${r.tool.version}`],
    ['input', r.source.path],
    ['SHA-256', r.source.sha256 ?? 'not computed'],
    ['format, records', `${r.source.format}, ${r.source.rows}`],
    ...(r.source.files.length > 1 ? [['files of the run', r.source.files.join(', ')]] : []),
    ['time', `${fmtNum(r.time.start)} .. ${fmtNum(r.time.end)} s, ${r.time.epochs} epochs${span}`],
    ['settings', `confidence ${s.confidence}, outlier gate ${s.gate}, window ${s.window_s} s, IMU preset ${s.imuPreset}${s.map ? `, mapping ${String(s.map)}` : ''}`],
    ...(r.partial ? [['partial', 'yes: decimated to fit the memory budget']] : []),
  ];
}

/** Channels table. */
export function channelTable(r: Report): TextTable {
  return {
    title: 'Channels (NIS against chi-square, two-sided 95% bounds)',
    header: ['channel', 'dof', 'updates', 'rejected', 'outliers', 'NIS mean', 'inside 95%', 'bounds 95%', 'Ljung-Box p'],
    rows: r.channels.map((c) => [
      c.name,
      String(c.dof),
      String(c.updates),
      String(c.rejected),
      String(c.outliers),
      fmtNum(c.nis.mean),
      fmtPct(c.nis.inside95),
      c.nis.bounds95 ? `${fmtNum(c.nis.bounds95[0])} .. ${fmtNum(c.nis.bounds95[1])}` : '-',
      fmtNum(c.whiteness?.ljungBoxP),
    ]),
  };
}

/** Errors table (empty rows when the report has no errors block). */
export function errorTable(r: Report): TextTable {
  const e = obj(r.errors);
  const conv = obj(e?.convergence);
  const row = (name: string, unit: string, rmseKey: string, maxKey: string): string[] | undefined => {
    const b = obj(e?.[name]);
    if (!b) return undefined;
    const nees = obj(b.nees);
    const settle = obj(conv?.[name])?.settleTime;
    return [`${name} [${unit}]`, fmtNum(b[rmseKey]), fmtNum(b[maxKey]), fmtNum(obj(b.ate)?.rmse), fmtNum(nees?.mean), fmtPct(nees?.inside95), fmtNum(settle, 2)];
  };
  const rows = [row('position', 'm', 'rmse', 'max'), row('velocity', 'm/s', 'rmse', 'max'), row('orientation', 'deg', 'rmseDeg', 'maxDeg')].filter((x): x is string[] => x !== undefined);
  return { title: 'Errors against the reference', header: ['block', 'RMSE', 'max', 'ATE RMSE', 'NEES mean', 'NEES inside 95%', 'settling time [s]'], rows };
}

/**
 * Segments of a run split by filter restarts (the `resets` block), each with its own convergence and NEES
 * (`errors.segments`) and NIS (`channels[].nis.segments`); no rows when the run has one segment.
 */
export function segmentTable(r: Report): TextTable {
  const segs = (obj(r.resets)?.segments ?? []) as { t: number; tEnd: number; epochs: number; start: string }[];
  const title = 'Segments (each filter restart starts one; convergence and consistency per segment)';
  const header = ['from [s]', 'to [s]', 'epochs', 'starts at', 'position settling [s]', 'velocity settling [s]', 'position NEES mean', 'NIS mean per channel'];
  if (!Array.isArray(segs) || segs.length <= 1) return { title, header, rows: [] };
  const errSegs = (obj(r.errors)?.segments ?? []) as Record<string, unknown>[];
  const rows = segs.map((s) => {
    const e = Array.isArray(errSegs) ? errSegs.find((x) => obj(x)?.t === s.t) : undefined;
    const conv = (block: string): unknown => obj(obj(e?.[block])?.convergence)?.settleTime;
    const nis = r.channels.map((c) => {
      const ns = (obj(c.nis)?.segments ?? []) as { t: number; mean?: number }[];
      const mine = Array.isArray(ns) ? ns.filter((x) => x.t >= s.t && x.t <= s.tEnd)[0] : undefined;
      return mine ? `${c.name} ${fmtNum(mine.mean)}` : '';
    }).filter((x) => x !== '').join(', ');
    const start = s.start === 'log' ? 'start of the log' : s.start === 'logged' ? 'reset in the log' : 'confirmed reset';
    return [fmtNum(s.t), fmtNum(s.tEnd), String(s.epochs), start, fmtNum(conv('position'), 2), fmtNum(conv('velocity'), 2), fmtNum(obj(obj(e?.position)?.nees)?.mean), nis || '-'];
  });
  return { title, header, rows };
}

/** Suspect UWB anchors, when the report has a UWB block. */
export function anchorTable(r: Report): TextTable {
  const anchors = obj(r.uwb)?.anchors;
  const rows = Array.isArray(anchors)
    ? anchors.map(obj).filter((a): a is Record<string, unknown> => a !== undefined).map((a) => [String(a.id), String(a.updates ?? '-'), fmtNum(obj(a.nis)?.mean), String(a.outliers ?? '-'), a.suspect ? 'yes' : 'no', typeof a.reason === 'string' ? a.reason : ''])
    : [];
  return { title: 'UWB anchors', header: ['anchor', 'updates', 'NIS mean', 'outliers', 'suspect', 'reason'], rows };
}

/** Findings, at most `limit` rows (time order as in the report). */
export function findingTable(r: Report, limit: number): TextTable {
  const rows = r.findings.slice(0, limit).map((f) => [f.kind, fmtNum(f.t, 2), f.line !== undefined ? String(f.line) : '-', f.channel ?? '', f.id ?? '', f.message]);
  return { title: `Findings (${r.findings.length})`, header: ['kind', 't [s]', 'line', 'channel', 'id', 'message'], rows, omitted: Math.max(0, r.findings.length - limit) };
}

/** Notes carried by the report (from the notes sidecar). */
export function noteTable(r: Report): TextTable {
  const rows = r.notes.map(obj).filter((n): n is Record<string, unknown> => n !== undefined).map((n) => [
    fmtNum(n.t, 2),
    typeof n.channel === 'string' ? n.channel : '',
    typeof n.status === 'string' ? n.status : '',
    Array.isArray(n.tags) ? n.tags.filter((t): t is string => typeof t === 'string').join(', ') : '',
    typeof n.text === 'string' ? n.text : JSON.stringify(n),
  ]);
  return { title: `Notes (${rows.length})`, header: ['t [s]', 'channel', 'status', 'tags', 'text'], rows };
}

/** Worst updates table. */
export function worstTable(r: Report, limit: number): TextTable {
  return {
    title: 'Worst updates (smallest chi-square tail probability)',
    header: ['t [s]', 'line', 'channel', 'id', 'NIS', 'p'],
    rows: r.worst.slice(0, limit).map((w) => [fmtNum(w.t, 2), String(w.line), w.channel, w.id ?? '', fmtNum(w.score, 2), w.p.toExponential(2)]),
    omitted: Math.max(0, r.worst.length - limit),
  };
}

/** The charts of a single report, from its series: NIS per channel with its band, errors, biases, the path. */
export function reportCharts(series: Series[]): ChartSpec[] {
  const by = new Map(series.map((s) => [s.key, s]));
  const charts: ChartSpec[] = [];
  const time = 'time [s]';
  for (const s of series) {
    if (!s.key.startsWith('nisWindow/')) continue;
    const ch = s.key.slice('nisWindow/'.length);
    const raw = by.get(`nis/${ch}`);
    charts.push({
      title: `${ch}: NIS per update and window average, with the window bounds`,
      unit: '',
      xLabel: time,
      lines: [...(raw ? [{ label: 'NIS per update', x: raw.x, y: raw.y }] : []), { label: 'window average', x: s.x, y: s.y }],
      ...(s.lo && s.hi ? { band: { x: s.x, lo: s.lo, hi: s.hi } } : {}),
    });
  }
  for (const [block, unit] of [['position', 'm'], ['velocity', 'm/s'], ['orientation', 'deg']]) {
    const axes = ['x', 'y', 'z'].map((a) => by.get(`error/${block}/${a}`)).filter((s): s is Series => s !== undefined);
    if (axes.length === 0) continue;
    charts.push({ title: `${block} error (true minus estimate)`, unit: axes[0].unit || unit, xLabel: time, lines: axes.map((s, i) => ({ label: 'xyz'[i], x: s.x, y: s.y })) });
  }
  for (const sensor of ['gyro', 'accel']) {
    const axes = ['x', 'y', 'z'].map((a) => by.get(`bias/${sensor}/${a}`)).filter((s): s is Series => s !== undefined);
    if (axes.length === 0) continue;
    charts.push({ title: `${sensor} bias estimate`, unit: axes[0].unit, xLabel: time, lines: axes.map((s, i) => ({ label: 'xyz'[i], x: s.x, y: s.y })) });
  }
  const est = by.get('trajectory/estimate');
  const ref = by.get('trajectory/reference');
  if (est && est.x.length > 0) {
    charts.push({
      title: 'path from above',
      unit: 'm',
      xLabel: 'east or x [m]',
      planar: true,
      lines: [{ label: 'estimate', x: est.x, y: est.y }, ...(ref ? [{ label: 'reference', x: ref.x, y: ref.y, dashed: true }] : [])],
    });
  }
  return charts;
}

/**
 * Typed messages between the extension host and the analysis panel's webview.
 *
 * Conventions (stated once, here):
 * - Message `type`s are string literals named `${scope}/${verb}` (readable in devtools, no runtime enum needed).
 * - The webview speaks first (`ready`); the host answers with one `init`, and sends `init` again after a re-read.
 * - A request carries a numeric `id`; its response carries the same `id` (`series/request` -> `series/response`).
 * - Columns travel as exact-size `ArrayBuffer`s of little-endian float64 (`Float64Array` on both sides), never as
 *   `number[]` or row objects. `x` is seconds in the log's own time base (for `logLog` series: tau in seconds; for
 *   `xy` series: east/x in metres).
 * - Everything the webview sends is untrusted input: the host accepts it only through {@link parseWebviewMessage},
 *   which checks every field at run time. A file is named by its index in `InitMessage.files`, never by a path.
 *
 * This file imports types only, so both the host and the webview bundle can use it without pulling code in,
 * except for small pure functions: which series the panel draws ({@link isDrawn}) and the guards at the bottom.
 */
import type { Report } from './core/report';
import type { Note } from './core/notes/sidecar';
import type { ComparedFigure, Overlay } from './core/compare';

/** One series the host holds, described without its data. */
export interface SeriesInfo {
  key: string;
  group: string;
  label: string;
  unit: string;
  /** Log-log axes (Allan deviation). */
  logLog: boolean;
  /** The series carries a band (`lo`/`hi`: bounds or a +-3 sigma envelope). */
  band: boolean;
  /** `x` is not time but a planar coordinate (trajectory from above, anchor positions). */
  xy: boolean;
  /** Number of points the host holds. */
  points: number;
  /** Smallest and largest finite x (NaN when the series is empty). */
  x0: number;
  x1: number;
}

// ---------------------------------------------------------------------------------------------------------------
// Which series the panel draws (shared: the webview builds its charts by it, the host pushes envelopes by it)

/** Key prefixes that name a view when a series carries no group. */
const PREFIX_VIEW: Record<string, string> = {
  nis: 'innovations',
  nisWindow: 'innovations',
  innovation: 'innovations',
  error: 'errors',
  nees: 'errors',
  neesWindow: 'errors',
  trajectory: 'trajectory',
  bias: 'bias',
  allan: 'allan',
  uwb: 'uwb',
};

/** Views that draw none of the run's series: the overview shows tables, Compare and Monte Carlo get their own data. */
const VIEWS_WITHOUT_SERIES: ReadonlySet<string> = new Set(['overview', 'compare', 'montecarlo']);

/** The view (tab id) a series is shown in: its `group`, else the view named by its key's first segment. */
export function viewOf(info: Pick<SeriesInfo, 'key' | 'group'>): string {
  const group = info.group.trim();
  if (group !== '') return group;
  const prefix = info.key.split('/')[0];
  return PREFIX_VIEW[prefix] ?? (prefix || 'other');
}

/**
 * Whether a series gets a chart of its own: step series (`.../steps`) are drawn as markers on their parent, and the
 * core's NIS histogram/density pair is replaced by the host's histogram chart when one exists for the channel.
 */
export function ownChart(info: Pick<SeriesInfo, 'key'>, histogramKeys: ReadonlySet<string>): boolean {
  const parts = info.key.split('/');
  if (parts[parts.length - 1] === 'steps' && parts.length > 2) return false;
  if ((parts[0] === 'nisHistogram' || parts[0] === 'nisPdf') && histogramKeys.has(`nis/${parts.slice(1).join('/')}`)) return false;
  return true;
}

/**
 * Whether the panel draws series `info` in a chart (of its own, or as a layer of the trajectory chart), given the
 * NIS keys that have a host histogram: its view draws series, and {@link ownChart} holds. The host sends unasked
 * envelopes only for these series; the webview asks only for these.
 */
export function isDrawn(info: Pick<SeriesInfo, 'key' | 'group'>, histogramKeys: ReadonlySet<string>): boolean {
  return !VIEWS_WITHOUT_SERIES.has(viewOf(info)) && ownChart(info, histogramKeys);
}

/** A histogram of a NIS series against the chi-square density of its dof (counts per bin). */
export interface HistogramInfo {
  /** Series key the values came from (`nis/<ch>`). */
  key: string;
  dof: number;
  /** Bin edges, ascending, `counts.length + 1` of them. */
  edges: number[];
  counts: number[];
  /** Expected counts per bin under chi-square(dof) with the same number of finite values. */
  expected: number[];
  /** Finite values beyond the last edge. */
  overflow: number;
  /** Finite values counted in all. */
  total: number;
}

/** What the panel shows and where: kept by the webview with `setState` and handed back on restore. */
export interface ViewState {
  /** Selected view (tab) id. */
  view?: string;
  /** Visible time window [t0, t1] in seconds, when zoomed. */
  window?: [number, number];
  /** Time of the linked cursor, seconds. */
  cursor_s?: number;
  /** Index into `report.worst` of the selected entry. */
  worstIndex?: number;
}

/** The webview's persisted state: the log it shows and its view state (what the serializer gets back). */
export interface PersistedState {
  /** URI of the log (string form). */
  uri: string;
  view: ViewState;
}

// ---------------------------------------------------------------------------------------------------------------
// Webview -> host

/** The webview has loaded and listens; the host answers with `init`. */
export interface ReadyMessage {
  type: 'ready';
  /** View state restored by the webview, if any. */
  view?: ViewState;
  /**
   * The pixel width a new chart asks its envelopes at: with it the host can send every series' first envelope right
   * after `init` without being asked (see `InitMessage.envelopesFollow`).
   */
  widthPx?: number;
}

/** Ask for a min/max envelope of one series over a window, one bucket per pixel column. */
export interface SeriesRequestMessage {
  type: 'series/request';
  id: number;
  key: string;
  /** Window start and end (x units); absent = the whole series. */
  t0?: number;
  t1?: number;
  /** Width of the plot in CSS pixels: the number of buckets. */
  widthPx: number;
  /** false: leave the source-line column out of the answer (it only serves the chart's table); absent: include it. */
  line?: false;
}

/**
 * Several `series/request`s in one message (the charts of one view after a linked zoom, or on first draw), answered
 * by one `series/responseBatch` holding the answers in the same order.
 */
export interface SeriesRequestBatchMessage {
  type: 'series/requestBatch';
  requests: SeriesRequestMessage[];
}

/** Reveal a line of one of the run's files in a text editor beside the panel, selected. */
export interface RevealLineMessage {
  type: 'reveal/line';
  /** 1-based line. */
  line: number;
  /** Index into `InitMessage.files` (default 0, the main log). */
  file?: number;
  /** Time of the epoch concerned, seconds (for the cursor of other views). */
  t?: number;
  /** Index into `report.worst` when the choice came from the worst list. */
  worstIndex?: number;
}

/** The linked time cursor moved (by hover or selection). */
export interface CursorDidChangeMessage {
  type: 'cursor/didChange';
  t: number;
  worstIndex?: number;
}

/** A line for the host's output channel (webview errors, render notes). */
export interface LogWriteMessage {
  type: 'log/write';
  level: 'info' | 'warning' | 'error';
  message: string;
}

/** Ask for the log's notes (sent after each `init`); answered by `notes/update`. */
export interface NotesRequestMessage {
  type: 'notes/request';
}

/** The fields of a note (core/notes/sidecar.ts) that the panel sets or shows. */
type NoteFields = 't' | 'tEnd' | 'channel' | 'updateId' | 'finding' | 'text' | 'tags';

/** Add a note on an epoch (`t`), a time range (`t`..`tEnd`), a channel update or a finding (`finding`: its kind). */
export interface NotesAddMessage extends Pick<Note, NoteFields> {
  type: 'notes/add';
}

/** Change a note's text, tags or status (applied to the note as it is on disk when saved). */
export interface NotesEditMessage {
  type: 'notes/edit';
  id: string;
  text?: string;
  tags?: string[];
  status?: 'open' | 'resolved';
}

/** Delete a note. */
export interface NotesDeleteMessage {
  type: 'notes/delete';
  id: string;
}

/** Go to the source code that writes a channel or a column of the log. */
export interface CodeGotoMessage {
  type: 'code/goto';
  /** A channel name (`tdoa`) or a column name (`nu_tdoa`). */
  name: string;
}

/** Ask the host to export the analysis as an HTML report or a Markdown summary (it opens a save dialog). */
export interface ReportExportMessage {
  type: 'report/export';
  format: 'html' | 'md';
}

/** How the compare view puts runs on one time axis (as the command line's `compare --align` / `--align-event`). */
export type CompareAlign = { by: 'time' } | { by: 'start' } | { by: 'event'; kind: string };

/** Add runs to this panel's comparison: the host shows an open dialog (several files may be chosen). */
export interface CompareAddMessage {
  type: 'compare/add';
}

/** Compare again with another alignment. */
export interface CompareAlignMessage {
  type: 'compare/align';
  align: CompareAlign;
}

/** Drop one run from the comparison (index into `CompareUpdateMessage.runs`; 0, the panel's own log, stays). */
export interface CompareRemoveMessage {
  type: 'compare/remove';
  run: number;
}

/** Export the compare view's comparison as HTML or Markdown (the host opens a save dialog). */
export interface CompareExportMessage {
  type: 'compare/export';
  format: 'html' | 'md';
}

/** Choose the runs of a Monte Carlo consistency check: the host shows an open dialog (a folder or several logs). */
export interface MonteCarloPickMessage {
  type: 'montecarlo/pick';
}

/**
 * Treat the epoch at `t` as a filter restart (a `covariance-jump` candidate the user confirms): the host stores it as
 * a reset note in the sidecar and re-runs the analysis, which then splits the run there.
 */
export interface ResetConfirmMessage {
  type: 'reset/confirm';
  t: number;
  /** The candidate's variance ratio and block, for the note's text. */
  factor?: number;
  block?: string;
}

/** Un-confirm the restart at `t` (its reset note is deleted) and re-run the analysis. */
export interface ResetUnconfirmMessage {
  type: 'reset/unconfirm';
  t: number;
}

/**
 * The panel's view state changed (view tab, window, cursor, worst entry): the host keeps it so it can open the panel
 * again in the same state when the extension host restarted (VS Code does not revive a live panel then).
 */
export interface ViewDidChangeMessage {
  type: 'view/didChange';
  view: ViewState;
}

/** Every message the webview may send. */
export type WebviewToHostMessage =
  | ResetConfirmMessage
  | ResetUnconfirmMessage
  | ViewDidChangeMessage
  | ReportExportMessage
  | CompareAddMessage
  | CompareAlignMessage
  | CompareRemoveMessage
  | CompareExportMessage
  | MonteCarloPickMessage
  | ReadyMessage
  | SeriesRequestMessage
  | SeriesRequestBatchMessage
  | RevealLineMessage
  | CursorDidChangeMessage
  | LogWriteMessage
  | NotesRequestMessage
  | NotesAddMessage
  | NotesEditMessage
  | NotesDeleteMessage
  | CodeGotoMessage;

// ---------------------------------------------------------------------------------------------------------------
// Host -> webview

/** How the host read the log for one revision (a growing log is read from the last byte read). */
export interface ReadInfo {
  /** `tail`: from byte `start` to the end (start 0 on the first run or a restart); `whole`: the whole run again. */
  mode: 'tail' | 'whole';
  /** Byte offset of the main log this run started reading at. */
  start: number;
  /** Bytes of the main log read by this run. */
  bytes: number;
  /** Size of the main log read so far (the next run's `start` in tail mode), bytes. */
  total: number;
  /**
   * Set when the log was read again from the start because it was truncated, replaced or rewritten in place
   * (extension/node/tail.ts), or its mapping changed.
   */
  restarted?: 'truncated' | 'replaced' | 'rewritten' | 'mapping';
}

/** Everything the panel needs to draw (sent after `ready` and again after each re-read). */
export interface InitMessage {
  type: 'init';
  /** Increases with each re-read of the log. */
  revision: number;
  /** URI of the log (string form), kept by the webview in `setState` so a restored panel finds its log. */
  uri: string;
  /** Display name of the log (file name only). */
  logName: string;
  /** Display names of the run's files; `RevealLineMessage.file` indexes this. */
  files: string[];
  report: Report;
  series: SeriesInfo[];
  histograms: HistogramInfo[];
  /** View state to restore (from the serializer or the previous revision). */
  view?: ViewState;
  /** One line shown above the views (e.g. "The log was truncated and re-read."). */
  notice?: string;
  /** How the log was read for this revision. */
  read?: ReadInfo;
  /**
   * True: the host posts the first envelope of every series (the whole series, at the `widthPx` of `ready`) right
   * after this message, as `series/responseBatch`es whose answers carry `id` 0, so the webview asks for none of them.
   */
  envelopesFollow?: boolean;
}

/** The envelope answering one `series/request` (columns as float64 ArrayBuffers of equal length). */
export interface SeriesResponseMessage {
  type: 'series/response';
  id: number;
  key: string;
  x: ArrayBuffer;
  y: ArrayBuffer;
  lo?: ArrayBuffer;
  hi?: ArrayBuffer;
  /** 1-based source line per point (NaN where unknown). */
  line?: ArrayBuffer;
  /** Points of the series inside the window before bucketing. */
  inWindow: number;
  /** Why no data came back (unknown key ...). */
  error?: string;
  /** Milliseconds the host spent forming this answer (the envelope), for the editor bench's breakdown. */
  host_ms?: number;
  /** Milliseconds from the host's post of the latest `init` to the start of this answer (the bench's breakdown). */
  host_since_init_ms?: number;
}

/** The answers to one `series/requestBatch`, in its order (their column buffers are transferred together). */
export interface SeriesResponseBatchMessage {
  type: 'series/responseBatch';
  responses: SeriesResponseMessage[];
}

/** Move the linked cursor (from the next/previous worst epoch commands). */
export interface CursorSetMessage {
  type: 'cursor/set';
  t: number;
  worstIndex?: number;
}

/** Loading progress or a failure to show instead of an endless spinner. */
export interface StatusMessage {
  type: 'status';
  state: 'loading' | 'error';
  /** URI of the log (string form), so the webview can persist it before the first `init`. */
  uri: string;
  /** 0..1 while loading, when known. */
  progress?: number;
  message?: string;
}

/** A note as the panel shows it: anchored to a log line, or detached (kept, with the reason). Text is plain text. */
export interface NoteInfo extends Pick<Note, 'id' | 'status' | NoteFields> {
  /** 1-based line in the main log, when attached and known. */
  line?: number;
  detached: boolean;
  reason?: string;
}

/** The log's notes (after `notes/request`, and after every change by any window or on disk). */
export interface NotesUpdateMessage {
  type: 'notes/update';
  notes: NoteInfo[];
  /** Edits not yet on disk (read-only folder, malformed sidecar). */
  pending: number;
  /** Why the notes file could not be read or written, one plain sentence. */
  message?: string;
  /** Show this channel's view (from a CodeLens in the estimator's source). */
  focusChannel?: string;
}

/** One run of the compare view. */
export interface CompareRunInfo {
  /** A, B, C ... (core/compare.ts runLabel). */
  label: string;
  /** File name only (from the disk: show as text). */
  name: string;
  sha256?: string;
  /** Log time of common time 0, seconds. */
  offset_s: number;
  /** The run's own-time window of the common span, seconds. */
  window: [number, number];
  /** True when the run reaches beyond the common span and its figures were computed again on it. */
  cropped: boolean;
}

/** State of a view computed from several runs. */
export type RunsViewState = 'empty' | 'loading' | 'ready' | 'error';

/** The compare view's content (after `compare/add`, `compare/align`, `compare/remove`, or the Compare Runs command). */
export interface CompareUpdateMessage {
  type: 'compare/update';
  state: RunsViewState;
  /** Why it failed, or what is being read. */
  message?: string;
  align: CompareAlign;
  /** Finding kinds every run has (choices of an event alignment). */
  eventKinds: string[];
  runs: CompareRunInfo[];
  /** The common span on the common axis, seconds (state `ready`). */
  span?: { start: number; end: number };
  figures: ComparedFigure[];
  overlays: Overlay[];
  /** Show the compare view (the command asked for it). */
  focus?: boolean;
}

/** One N-run average of the Monte Carlo view, with its chi2(N n)/N interval per epoch (columns as float64 buffers). */
export interface MonteCarloSeriesInfo {
  /** `montecarlo/nees/<block>` or `montecarlo/nis/<channel>`. */
  key: string;
  kind: 'nees' | 'nis';
  /** Error block or channel name (from the log: show as text). */
  name: string;
  dof: number;
  /** Epochs with at least one run's value. */
  epochs: number;
  mean?: number;
  /** Share of epochs whose N-run average lies inside its interval (on every epoch, not only those drawn). */
  inside95?: number;
  /** The interval when all N runs are present. */
  bounds95?: [number, number];
  /** Time (the first run's log time), N-run average, interval: a min/max envelope of equal length. */
  x: ArrayBuffer;
  y: ArrayBuffer;
  lo: ArrayBuffer;
  hi: ArrayBuffer;
}

/** The Monte Carlo view's content. */
export interface MonteCarloUpdateMessage {
  type: 'montecarlo/update';
  state: RunsViewState;
  message?: string;
  /** File names of the runs, in order. */
  files: string[];
  runs: number;
  series: MonteCarloSeriesInfo[];
  notes: string[];
  /** Show the Monte Carlo view. */
  focus?: boolean;
}

/** Every message the host may send. */
export type HostToWebviewMessage =
  | InitMessage
  | SeriesResponseMessage
  | SeriesResponseBatchMessage
  | CursorSetMessage
  | StatusMessage
  | NotesUpdateMessage
  | CompareUpdateMessage
  | MonteCarloUpdateMessage;

// ---------------------------------------------------------------------------------------------------------------
// Guards

/** Exhaustiveness check for `switch (msg.type)`: a compile error when a case is missing, a throw if reached. */
export function assertNever(value: never): never {
  throw new Error(`unexpected message: ${JSON.stringify(value)}`);
}

/** Largest line number accepted from the webview (beyond any real log). */
const MAX_LINE = 2 ** 40;
/** Largest plot width accepted, pixels. */
const MAX_WIDTH_PX = 16384;
/** Longest log text accepted from the webview, characters. */
const MAX_LOG_CHARS = 4000;
/** Longest note text, characters. */
const MAX_NOTE_CHARS = 4000;
/** Most tags on a note, and longest tag. */
const MAX_TAGS = 32;
const MAX_TAG_CHARS = 64;

function isTags(value: unknown): value is string[] {
  return Array.isArray(value) && value.length <= MAX_TAGS && value.every((t) => typeof t === 'string' && t.length <= MAX_TAG_CHARS);
}

function isShortString(value: unknown, max = 256): value is string {
  return typeof value === 'string' && value.length > 0 && value.length <= max;
}

function isRecord(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

function isFiniteNumber(value: unknown): value is number {
  return typeof value === 'number' && Number.isFinite(value);
}

function isIndex(value: unknown, max = Number.MAX_SAFE_INTEGER): value is number {
  return typeof value === 'number' && Number.isInteger(value) && value >= 0 && value <= max;
}

/** An ArrayBuffer, or a typed-array view when a transport recreated one as such. */
function isBufferLike(value: unknown): boolean {
  return value instanceof ArrayBuffer || ArrayBuffer.isView(value);
}

function isRunsState(value: unknown): value is RunsViewState {
  return value === 'empty' || value === 'loading' || value === 'ready' || value === 'error';
}

function optFinite(value: unknown): value is number | undefined {
  return value === undefined || isFiniteNumber(value);
}

function optIndex(value: unknown): value is number | undefined {
  return value === undefined || isIndex(value);
}

function isSeriesResponse(value: Record<string, unknown>): boolean {
  return isIndex(value.id) && typeof value.key === 'string' && isBufferLike(value.x) && isBufferLike(value.y);
}

/** Most runs a comparison holds. */
const MAX_RUNS = 64;

/** Validate an alignment from the webview; returns a clean copy or undefined. */
export function parseCompareAlign(value: unknown): CompareAlign | undefined {
  if (!isRecord(value)) return undefined;
  if (value.by === 'time' || value.by === 'start') return { by: value.by };
  if (value.by === 'event' && typeof value.kind === 'string' && /^[a-z][a-z0-9-]{0,63}$/.test(value.kind)) return { by: 'event', kind: value.kind };
  return undefined;
}

/** Validate a view state from the webview or a serializer; returns a clean copy or undefined. */
export function parseViewState(value: unknown): ViewState | undefined {
  if (!isRecord(value)) return undefined;
  const out: ViewState = {};
  if (typeof value.view === 'string' && value.view.length <= 64) out.view = value.view;
  const w = value.window;
  if (Array.isArray(w) && w.length === 2 && isFiniteNumber(w[0]) && isFiniteNumber(w[1]) && w[0] < w[1]) out.window = [w[0], w[1]];
  if (isFiniteNumber(value.cursor_s)) out.cursor_s = value.cursor_s;
  if (isIndex(value.worstIndex)) out.worstIndex = value.worstIndex;
  return out;
}

/** Validate a persisted panel state (from `deserializeWebviewPanel`); undefined when unusable. */
export function parsePersistedState(value: unknown): PersistedState | undefined {
  if (!isRecord(value) || typeof value.uri !== 'string' || value.uri.length === 0 || value.uri.length > 8192) return undefined;
  return { uri: value.uri, view: parseViewState(value.view) ?? {} };
}

/** Most requests one `series/requestBatch` may carry. */
const MAX_BATCH = 512;

function parseSeriesRequest(value: Record<string, unknown>): SeriesRequestMessage | string {
  const { id, key, t0, t1, widthPx } = value;
  if (!isIndex(id)) return 'series/request: id is not a non-negative integer';
  if (typeof key !== 'string' || key.length === 0 || key.length > 512) return 'series/request: key is not a string';
  if (!optFinite(t0) || !optFinite(t1)) return 'series/request: t0/t1 not finite';
  if (t0 !== undefined && t1 !== undefined && !(t0 <= t1)) return 'series/request: t0 > t1';
  if (!isIndex(widthPx, MAX_WIDTH_PX) || widthPx < 1) return 'series/request: widthPx out of range';
  if (value.line !== undefined && value.line !== false) return 'series/request: line is not false';
  const out: SeriesRequestMessage = { type: 'series/request', id, key, widthPx };
  if (value.line === false) out.line = false;
  if (t0 !== undefined) out.t0 = t0;
  if (t1 !== undefined) out.t1 = t1;
  return out;
}

/**
 * Check a message from the webview field by field. Returns the typed message (a clean copy holding only known
 * fields), or a reason string when it is unknown or malformed (the caller logs it and ignores the message).
 */
export function parseWebviewMessage(value: unknown): WebviewToHostMessage | string {
  if (!isRecord(value)) return 'not an object';
  const type = value.type;
  switch (type) {
    case 'ready': {
      const view = value.view === undefined ? undefined : parseViewState(value.view);
      const out: ReadyMessage = view ? { type, view } : { type };
      if (value.widthPx !== undefined) {
        if (!isIndex(value.widthPx, MAX_WIDTH_PX) || value.widthPx < 1) return 'ready: widthPx out of range';
        out.widthPx = value.widthPx;
      }
      return out;
    }
    case 'series/request':
      return parseSeriesRequest(value);
    case 'series/requestBatch': {
      const { requests } = value;
      if (!Array.isArray(requests) || requests.length === 0 || requests.length > MAX_BATCH) return `series/requestBatch: requests is not an array of 1..${MAX_BATCH}`;
      const out: SeriesRequestMessage[] = [];
      for (const r of requests) {
        const parsed = isRecord(r) && r.type === 'series/request' ? parseSeriesRequest(r) : 'not a series/request';
        if (typeof parsed === 'string') return `series/requestBatch: request ${out.length}: ${parsed}`;
        out.push(parsed);
      }
      return { type: 'series/requestBatch', requests: out };
    }
    case 'reveal/line': {
      const { line, file, t, worstIndex } = value;
      if (!isIndex(line, MAX_LINE) || line < 1) return 'reveal/line: line is not a positive integer';
      if (!optIndex(file) || !optFinite(t) || !optIndex(worstIndex)) return 'reveal/line: bad file, t or worstIndex';
      const out: RevealLineMessage = { type, line };
      if (file !== undefined) out.file = file;
      if (t !== undefined) out.t = t;
      if (worstIndex !== undefined) out.worstIndex = worstIndex;
      return out;
    }
    case 'view/didChange': {
      const view = parseViewState(value.view);
      return view ? { type, view } : 'view/didChange: view is not a view state';
    }
    case 'cursor/didChange': {
      const { t, worstIndex } = value;
      if (!isFiniteNumber(t)) return 'cursor/didChange: t not finite';
      if (!optIndex(worstIndex)) return 'cursor/didChange: bad worstIndex';
      return worstIndex === undefined ? { type, t } : { type, t, worstIndex };
    }
    case 'log/write': {
      const { level, message } = value;
      if (level !== 'info' && level !== 'warning' && level !== 'error') return 'log/write: bad level';
      if (typeof message !== 'string') return 'log/write: message is not a string';
      return { type, level, message: message.slice(0, MAX_LOG_CHARS) };
    }
    case 'notes/request':
      return { type };
    case 'notes/add': {
      const { t, tEnd, channel, updateId, finding, text, tags } = value;
      if (!isFiniteNumber(t) || !optFinite(tEnd) || (tEnd !== undefined && tEnd < t)) return 'notes/add: bad t or tEnd';
      if (typeof text !== 'string' || text.length > MAX_NOTE_CHARS) return 'notes/add: text is not a string of at most 4000 characters';
      if (!isTags(tags)) return 'notes/add: tags is not a list of short strings';
      for (const f of [channel, updateId, finding]) if (f !== undefined && !isShortString(f)) return 'notes/add: bad channel, updateId or finding';
      const out: NotesAddMessage = { type, t, text, tags: [...tags] };
      if (tEnd !== undefined) out.tEnd = tEnd;
      if (channel !== undefined) out.channel = channel as string;
      if (updateId !== undefined) out.updateId = updateId as string;
      if (finding !== undefined) out.finding = finding as string;
      return out;
    }
    case 'notes/edit': {
      const { id, text, tags, status } = value;
      if (!isShortString(id, 64)) return 'notes/edit: bad id';
      if (text !== undefined && (typeof text !== 'string' || text.length > MAX_NOTE_CHARS)) return 'notes/edit: bad text';
      if (tags !== undefined && !isTags(tags)) return 'notes/edit: bad tags';
      if (status !== undefined && status !== 'open' && status !== 'resolved') return 'notes/edit: bad status';
      const out: NotesEditMessage = { type, id };
      if (text !== undefined) out.text = text;
      if (tags !== undefined) out.tags = [...tags];
      if (status !== undefined) out.status = status;
      return out;
    }
    case 'notes/delete':
      return isShortString(value.id, 64) ? { type, id: value.id } : 'notes/delete: bad id';
    case 'code/goto':
      return isShortString(value.name) ? { type, name: value.name } : 'code/goto: bad name';
    case 'reset/confirm': {
      const { t, factor, block } = value;
      if (!isFiniteNumber(t)) return 'reset/confirm: t not finite';
      if (factor !== undefined && !(isFiniteNumber(factor) && factor > 0)) return 'reset/confirm: factor is not a positive number';
      if (block !== undefined && !isShortString(block, 64)) return 'reset/confirm: bad block';
      const out: ResetConfirmMessage = { type, t };
      if (factor !== undefined) out.factor = factor;
      if (block !== undefined) out.block = block as string;
      return out;
    }
    case 'reset/unconfirm':
      return isFiniteNumber(value.t) ? { type, t: value.t } : 'reset/unconfirm: t not finite';
    case 'report/export':
      return value.format === 'html' || value.format === 'md' ? { type, format: value.format } : 'report/export: format is not html or md';
    case 'compare/add':
      return { type };
    case 'compare/align': {
      const align = parseCompareAlign(value.align);
      return align ? { type, align } : 'compare/align: align is not {by: time|start} or {by: event, kind}';
    }
    case 'compare/remove':
      return isIndex(value.run, MAX_RUNS) && value.run >= 1 ? { type, run: value.run } : 'compare/remove: run is not an index of a compared run (1 or more)';
    case 'compare/export':
      return value.format === 'html' || value.format === 'md' ? { type, format: value.format } : 'compare/export: format is not html or md';
    case 'montecarlo/pick':
      return { type };
    default:
      return `unknown message type ${JSON.stringify(typeof type === 'string' ? type.slice(0, 64) : typeof type)}`;
  }
}

/**
 * Check a message from the host in the webview (cheap structural check: the host is trusted, but a stale or
 * foreign message must not break the panel). Returns undefined for anything unrecognised.
 */
export function parseHostMessage(value: unknown): HostToWebviewMessage | undefined {
  if (!isRecord(value)) return undefined;
  switch (value.type) {
    case 'init':
      return isRecord(value.report) && Array.isArray(value.series) && Array.isArray(value.files) && Array.isArray(value.histograms)
        ? (value as unknown as InitMessage)
        : undefined;
    case 'series/response':
      return isSeriesResponse(value) ? (value as unknown as SeriesResponseMessage) : undefined;
    case 'series/responseBatch':
      return Array.isArray(value.responses) && value.responses.every((r) => isRecord(r) && r.type === 'series/response' && isSeriesResponse(r))
        ? (value as unknown as SeriesResponseBatchMessage)
        : undefined;
    case 'cursor/set':
      return isFiniteNumber(value.t) ? (value as unknown as CursorSetMessage) : undefined;
    case 'status':
      return value.state === 'loading' || value.state === 'error' ? (value as unknown as StatusMessage) : undefined;
    case 'notes/update':
      return Array.isArray(value.notes) && isIndex(value.pending) ? (value as unknown as NotesUpdateMessage) : undefined;
    case 'compare/update':
      return isRunsState(value.state) && Array.isArray(value.runs) && Array.isArray(value.figures) && Array.isArray(value.overlays) && parseCompareAlign(value.align) !== undefined
        ? (value as unknown as CompareUpdateMessage)
        : undefined;
    case 'montecarlo/update':
      return isRunsState(value.state) && Array.isArray(value.series) && Array.isArray(value.files) && isIndex(value.runs) &&
        value.series.every((s) => isRecord(s) && isBufferLike(s.x) && isBufferLike(s.y) && isBufferLike(s.lo) && isBufferLike(s.hi))
        ? (value as unknown as MonteCarloUpdateMessage)
        : undefined;
    default:
      return undefined;
  }
}

/**
 * Growable column storage for the streams of one run, and their conversion to the model's types.
 *
 * Columns are Float64Arrays preallocated and grown geometrically (x2); new space is filled with NaN so a record only
 * writes the columns it has. Every record keeps its time, 1-based line and the index of its file in the run.
 */
import type { Anchor, Channel, ImuStream, RangeStream, StateStream, TdoaStream } from '../model';
import { DiagnosticSink } from './diagnostics';
import type { GrowthGuard } from './budget';
import { clip } from './diagnostics';

const INITIAL_CAPACITY = 256;
const TIME_BOX = new Float64Array(1);

/**
 * A Float64Array of `n` zeros, on a SharedArrayBuffer when `shared`: posting a log whose columns are shared to a
 * worker thread shares them instead of copying them (the command line's parallel analysis, node/parallelAnalysis.ts).
 */
export function float64Column(n: number, shared: boolean): Float64Array {
  return shared ? new Float64Array(new SharedArrayBuffer(n * 8)) : new Float64Array(n);
}

/** One column of a stream, `width` values per record. `arr` is replaced when the stream grows. */
export class Slot {
  arr: Float64Array;
  constructor(readonly width: number, capacity: number, shared = false) {
    this.arr = float64Column(capacity * width, shared).fill(NaN);
  }
}

/** Interns strings to indices (the model's id dictionaries). */
export class Interner {
  readonly list: string[] = [];
  private readonly index = new Map<string, number>();
  /** Index of `s`, adding it when new. */
  id(s: string): number {
    let k = this.index.get(s);
    if (k === undefined) { k = this.list.length; this.list.push(s); this.index.set(s, k); }
    return k;
  }
}

/** Records of one stream: time, line, file index and named slots. */
export class StreamBuilder {
  capacity = INITIAL_CAPACITY;
  length = 0;
  t: Float64Array = new Float64Array(INITIAL_CAPACITY);
  line: Float64Array = new Float64Array(INITIAL_CAPACITY);
  fileIndex: Uint16Array = new Uint16Array(INITIAL_CAPACITY);
  readonly slots = new Map<string, Slot>();
  /** Index of the first record of each file segment, in order of reading. */
  readonly segments: { file: number; start: number }[] = [];
  /** Memory budget (budget.ts): asked before every growth; absent means unbounded. */
  guard?: GrowthGuard;
  /** Decimation stride (budget.ts): 1 keeps every record; k keeps every k-th record offered. */
  keepEvery = 1;
  /** Records offered since decimation began (counted only while `keepEvery > 1`). */
  offered = 0;
  /** Records dropped by decimation. */
  dropped = 0;
  /** The free row at `length` holds a dropped record's values (cleared before reuse). */
  scratchDirty = false;
  /** Columns allocated from now on live on SharedArrayBuffers (ReadOptions.sharedColumns). */
  shared = false;

  /** The slot named `name`, created (NaN-filled) on first use. */
  slot(name: string, width = 1): Slot {
    let s = this.slots.get(name);
    if (!s) { s = new Slot(width, this.capacity, this.shared); this.slots.set(name, s); }
    return s;
  }

  /** Append a record and return its index. */
  add(t: number, line: number, file: number): number {
    TIME_BOX[0] = t;
    return this.addBoxed(TIME_BOX, line, file);
  }

  /**
   * Append a record whose time is `tBox[0]`. The hot path passes the time in an array because a double argument
   * to a call V8 does not inline is boxed in a fresh heap number (garbage on every record).
   */
  addBoxed(tBox: Float64Array, line: number, file: number): number {
    if (this.length === this.capacity) this.grow();
    if (this.keepEvery !== 1 && !this.keepNext()) return this.length;
    const i = this.length++;
    this.t[i] = tBox[0];
    this.line[i] = line;
    this.fileIndex[i] = file;
    const seg = this.segments[this.segments.length - 1];
    if (!seg || seg.file !== file) this.segments.push({ file, start: i });
    return i;
  }

  /**
   * Decimated stream: whether the record being offered is kept. A dropped record is written to the free row at
   * `length` (the caller writes its values there); that row is cleared before it is used again.
   */
  private keepNext(): boolean {
    if (this.scratchDirty) {
      const i = this.length;
      for (const s of this.slots.values()) s.arr.fill(NaN, i * s.width, i * s.width + s.width);
      this.scratchDirty = false;
    }
    if (this.offered++ % this.keepEvery === 0) return true;
    this.scratchDirty = true;
    this.dropped++;
    return false;
  }

  /** Make room for `n` records at least (one allocation instead of repeated doubling when the size is known). */
  reserve(n: number): void {
    const cap = this.guard ? this.guard.capacityFor(this, Math.ceil(n)) : Math.ceil(n);
    if (cap > this.capacity) this.resize(cap);
  }

  private grow(): void {
    const cap = this.capacity * 2;
    if (this.guard && this.length >= 2 && this.guard.capacityFor(this, cap) < cap) { this.guard.thin(this); return; }
    this.resize(cap);
  }

  /**
   * Move every column to room for `cap` records. All the stream's Float64 columns are views of ONE new buffer:
   * glibc backs a large block with transparent huge pages when asked (see extension/cli/launch.ts), but a 2 MB
   * column of its own is too small to hold an aligned 2 MiB page, so column by column every first write faulted
   * 4 KiB at a time (measured: ~0.3 s of the 250,000-row benchmark's read went to page faults).
   */
  private resize(cap: number): void {
    let width = 2; // t and line
    for (const s of this.slots.values()) width += s.width;
    const block = float64Column(cap * width, this.shared);
    let offset = 0;
    const carve = (w: number): Float64Array => block.subarray(offset, (offset += cap * w));
    const t = carve(1); t.set(this.t); this.t = t;
    const l = carve(1); l.set(this.line); this.line = l;
    const f = this.uint16Column(cap); f.set(this.fileIndex); this.fileIndex = f;
    for (const s of this.slots.values()) {
      const a = carve(s.width);
      a.set(s.arr);
      a.fill(NaN, this.capacity * s.width);
      s.arr = a;
    }
    this.capacity = cap;
  }

  private uint16Column(n: number): Uint16Array {
    return this.shared ? new Uint16Array(new SharedArrayBuffer(n * 2)) : new Uint16Array(n);
  }

  /** Number of distinct files that contributed records. */
  fileCount(): number {
    return new Set(this.segments.map((s) => s.file)).size;
  }

  /**
   * Sort records by time (stable) when more than one file contributed: the run's files are joined by time.
   * Records from one file keep their order, so time going backwards inside a file is still reported.
   */
  joinByTime(): void {
    if (this.fileCount() <= 1) return;
    const n = this.length;
    const order = new Uint32Array(n);
    for (let i = 0; i < n; i++) order[i] = i;
    const t = this.t;
    const sorted = Array.from(order).sort((a, b) => {
      const ta = t[a], tb = t[b];
      if (ta < tb) return -1;
      if (ta > tb) return 1;
      return a - b;
    });
    const permute = (src: Float64Array, width: number): Float64Array => {
      const out = float64Column(src.length, this.shared).fill(NaN);
      for (let k = 0; k < n; k++) out.set(src.subarray(sorted[k] * width, sorted[k] * width + width), k * width);
      return out;
    };
    this.t = permute(this.t, 1);
    this.line = permute(this.line, 1);
    const f = this.uint16Column(this.capacity);
    for (let k = 0; k < n; k++) f[k] = this.fileIndex[sorted[k]];
    this.fileIndex = f;
    for (const s of this.slots.values()) s.arr = permute(s.arr, s.width);
  }

  /** Exact-length view of a slot's values. */
  view(name: string): Float64Array | undefined {
    const s = this.slots.get(name);
    return s ? s.arr.subarray(0, this.length * s.width) : undefined;
  }

  /** The common Stream fields (views of exact length). */
  base(files: string[]): { t_s: Float64Array; line: Float64Array; file: string; length: number; fileIndex?: Uint16Array } {
    const first = this.segments[0]?.file ?? 0;
    const out: { t_s: Float64Array; line: Float64Array; file: string; length: number; fileIndex?: Uint16Array } = {
      t_s: this.t.subarray(0, this.length),
      line: this.line.subarray(0, this.length),
      file: files[first] ?? '',
      length: this.length,
    };
    if (this.fileCount() > 1) out.fileIndex = this.fileIndex.subarray(0, this.length);
    return out;
  }
}

/** Updates of one measurement channel. */
export class ChannelBuilder extends StreamBuilder {
  /** Degrees of freedom, fixed by the first description of the channel. */
  dof = 0;
  readonly ids = new Interner();
  angleComponents: boolean[] = [];
  hasS = false;
  hasNis = false;
  constructor(readonly name: string) {
    super();
  }
}

/** Names of the IMU stream's columns. */
export const IMU_COLUMNS = ['gyro_x', 'gyro_y', 'gyro_z', 'acc_x', 'acc_y', 'acc_z', 'mag_x', 'mag_y', 'mag_z'];

/** Everything gathered while reading the files of one run. */
export class RunBuilder {
  readonly diagnostics = new DiagnosticSink();
  readonly files: string[] = [];
  readonly state = new StreamBuilder();
  readonly reference = new StreamBuilder();
  readonly channels = new Map<string, ChannelBuilder>();
  readonly imu = new StreamBuilder();
  readonly tdoa = new StreamBuilder();
  readonly ranges = new StreamBuilder();
  readonly anchorIds = new Interner();
  readonly anchors = new Map<string, [number, number, number]>();
  readonly anchorSource = new Map<string, string>();
  readonly resets: number[] = [];
  readonly meta: Record<string, string> = {};
  /** Memory budget of the run's columns (budget.ts), passed on to channels created later. */
  guard?: GrowthGuard;
  /** Full covariance of state records: states and per-record matrices (index -> matrix). */
  pStates: string[] | undefined;
  pMatrix: Float64Array | undefined;
  rows = 0;
  /** Columns on SharedArrayBuffers (set before the first record through {@link useSharedColumns}). */
  shared = false;

  /** Allocate every column from now on (of the streams and of channels created later) on SharedArrayBuffers. */
  useSharedColumns(): void {
    this.shared = true;
    for (const b of this.builders()) b.shared = true;
  }

  /** Every stream builder of the run. */
  builders(): StreamBuilder[] {
    return [this.state, this.reference, ...this.channels.values(), this.imu, this.tdoa, this.ranges];
  }

  /** Index of `file` in {@link files}, added when new. */
  fileIndex(file: string): number {
    let k = this.files.indexOf(file);
    if (k < 0) { k = this.files.length; this.files.push(file); }
    return k;
  }

  /** The builder of channel `name`. */
  channel(name: string): ChannelBuilder {
    let c = this.channels.get(name);
    if (!c) { c = new ChannelBuilder(name); c.guard = this.guard; c.shared = this.shared; this.channels.set(name, c); }
    return c;
  }

  /** Record an anchor position (the first position given for an id wins; a different later one is reported). */
  addAnchor(id: string, p: [number, number, number], file: string, line: number): void {
    const old = this.anchors.get(id);
    if (!old) {
      this.anchors.set(id, p);
      this.anchorSource.set(id, `${file}:${line}`);
      this.anchorIds.id(id);
      return;
    }
    const d = Math.hypot(old[0] - p[0], old[1] - p[1], old[2] - p[2]);
    if (d > 1e-6) {
      this.diagnostics.report('warning', 'bad-value', file, line,
        `Anchor ${clip(id)} is given at (${p.join(', ')}) here but at (${old.join(', ')}) in ${this.anchorSource.get(id)}; the first position is kept.`,
        { key: `anchor-moved:${id}` });
    }
  }
}

/** State columns of a builder as a StateStream (optionally with a full covariance). */
export function toStateStream(b: StreamBuilder, files: string[], P?: { states: string[]; matrix: Float64Array }): StateStream {
  const columns = new Map<string, Float64Array>();
  for (const name of [...b.slots.keys()].sort()) if (!name.startsWith('__')) columns.set(name, b.view(name) as Float64Array);
  const s: StateStream = { ...b.base(files), columns };
  if (P) s.P = P;
  return s;
}

/** A channel builder as the model's Channel. */
export function toChannel(c: ChannelBuilder, files: string[]): Channel {
  const n = c.length;
  const rejectedF = c.view('rejected');
  const rejected = c.shared ? new Uint8Array(new SharedArrayBuffer(n)) : new Uint8Array(n);
  if (rejectedF) for (let i = 0; i < n; i++) rejected[i] = rejectedF[i] === rejectedF[i] && rejectedF[i] !== 0 ? 1 : 0;
  const nu = c.view('nu') ?? new Float64Array(n * c.dof).fill(NaN);
  const angle = c.angleComponents.slice(0, c.dof);
  while (angle.length < c.dof) angle.push(false);
  const ch: Channel = {
    ...c.base(files),
    name: c.name,
    dof: c.dof,
    nu,
    id: c.view('id') ?? new Float64Array(n).fill(NaN),
    ids: c.ids.list,
    rejected,
    angleComponents: angle,
  };
  if (c.hasS) { const S = c.view('S'); if (S) ch.S = S; }
  if (c.hasNis) { const nis = c.view('nis'); if (nis) ch.nisLogged = nis; }
  return ch;
}

/** The IMU builder as the model's ImuStream (undefined when empty). */
export function toImu(b: StreamBuilder, files: string[]): ImuStream | undefined {
  if (b.length === 0) return undefined;
  const col = (name: string): Float64Array => b.view(name) ?? new Float64Array(b.length).fill(NaN);
  const s: ImuStream = {
    ...b.base(files),
    gyro_x: col('gyro_x'), gyro_y: col('gyro_y'), gyro_z: col('gyro_z'),
    acc_x: col('acc_x'), acc_y: col('acc_y'), acc_z: col('acc_z'),
  };
  if (b.slots.has('mag_x') || b.slots.has('mag_y') || b.slots.has('mag_z')) {
    s.mag_x = col('mag_x'); s.mag_y = col('mag_y'); s.mag_z = col('mag_z');
  }
  return s;
}

/** The raw TDOA builder as the model's TdoaStream (undefined when empty). */
export function toTdoa(b: StreamBuilder, files: string[]): TdoaStream | undefined {
  if (b.length === 0) return undefined;
  return { ...b.base(files), i: b.view('i') as Float64Array, j: b.view('j') as Float64Array, d_m: b.view('d') as Float64Array };
}

/** The ranges builder as the model's RangeStream (undefined when empty). */
export function toRanges(b: StreamBuilder, files: string[]): RangeStream | undefined {
  if (b.length === 0) return undefined;
  return { ...b.base(files), anchor: b.view('anchor') as Float64Array, r_m: b.view('r') as Float64Array };
}

/** Anchors in the order their ids were first seen. */
export function toAnchors(run: RunBuilder): Anchor[] {
  const out: Anchor[] = [];
  for (const [id, p] of run.anchors) out.push({ id, p });
  return out;
}

/**
 * Restrict a run to a time window: every record stream keeps only the records whose time lies in [t0, t1] (log time
 * base, seconds, both ends included), so that every stage analyses the same span. Used to compare runs of different
 * lengths on their common span. The reference trajectory is kept whole (errors interpolate it at the kept estimate
 * epochs); reader diagnostics without a time are kept, those with a time outside the window dropped.
 * Pure: the input log is not modified; columns are copied.
 */
import type { NavLog, Stream, StateStream, Channel, ImuStream, TdoaStream, RangeStream } from './model';

type Column = Float64Array | Uint8Array | Uint16Array;

/** Indices of the records of a stream with t in [t0, t1], in record order. */
export function indicesInWindow(stream: Pick<Stream, 't_s' | 'length'>, t0_s: number, t1_s: number): Uint32Array {
  const n = stream.length;
  const t = stream.t_s;
  let count = 0;
  for (let i = 0; i < n; i++) if (t[i] >= t0_s && t[i] <= t1_s) count++;
  const idx = new Uint32Array(count);
  let k = 0;
  for (let i = 0; i < n; i++) if (t[i] >= t0_s && t[i] <= t1_s) idx[k++] = i;
  return idx;
}

/** Copy the `width` values of each chosen record (row-major blocks of `width`). */
function gather<T extends Column>(col: T, idx: Uint32Array, width = 1): T {
  const ctor = col.constructor as new (n: number) => T;
  const out = new ctor(idx.length * width);
  for (let k = 0; k < idx.length; k++) {
    const src = idx[k] * width;
    for (let j = 0; j < width; j++) out[k * width + j] = col[src + j];
  }
  return out;
}

function gatherOpt<T extends Column>(col: T | undefined, idx: Uint32Array, width = 1): T | undefined {
  return col === undefined ? undefined : gather(col, idx, width);
}

function cropBase<S extends Stream>(s: S, idx: Uint32Array): Stream {
  return {
    t_s: gather(s.t_s, idx),
    line: gather(s.line, idx),
    file: s.file,
    length: idx.length,
    ...(s.fileIndex ? { fileIndex: gather(s.fileIndex, idx) } : {}),
  };
}

function cropState(s: StateStream, t0: number, t1: number): StateStream {
  const idx = indicesInWindow(s, t0, t1);
  const columns = new Map<string, Float64Array>();
  for (const [name, col] of s.columns) columns.set(name, gather(col, idx));
  const n = s.P?.states.length ?? 0;
  return { ...cropBase(s, idx), columns, ...(s.P ? { P: { states: s.P.states.slice(), matrix: gather(s.P.matrix, idx, n * n) } } : {}) };
}

function cropChannel(c: Channel, t0: number, t1: number): Channel {
  const idx = indicesInWindow(c, t0, t1);
  return {
    ...cropBase(c, idx),
    name: c.name,
    dof: c.dof,
    nu: gather(c.nu, idx, c.dof),
    ...(c.S ? { S: gather(c.S, idx, c.dof * c.dof) } : {}),
    ...(c.nisLogged ? { nisLogged: gather(c.nisLogged, idx) } : {}),
    id: gather(c.id, idx),
    ids: c.ids,
    rejected: gather(c.rejected, idx),
    angleComponents: c.angleComponents.slice(),
  };
}

function cropImu(s: ImuStream, t0: number, t1: number): ImuStream {
  const idx = indicesInWindow(s, t0, t1);
  return {
    ...cropBase(s, idx),
    gyro_x: gather(s.gyro_x, idx), gyro_y: gather(s.gyro_y, idx), gyro_z: gather(s.gyro_z, idx),
    acc_x: gather(s.acc_x, idx), acc_y: gather(s.acc_y, idx), acc_z: gather(s.acc_z, idx),
    ...(s.mag_x ? { mag_x: gatherOpt(s.mag_x, idx) } : {}),
    ...(s.mag_y ? { mag_y: gatherOpt(s.mag_y, idx) } : {}),
    ...(s.mag_z ? { mag_z: gatherOpt(s.mag_z, idx) } : {}),
  };
}

function cropTdoa(s: TdoaStream, t0: number, t1: number): TdoaStream {
  const idx = indicesInWindow(s, t0, t1);
  return { ...cropBase(s, idx), i: gather(s.i, idx), j: gather(s.j, idx), d_m: gather(s.d_m, idx) };
}

function cropRanges(s: RangeStream, t0: number, t1: number): RangeStream {
  const idx = indicesInWindow(s, t0, t1);
  return { ...cropBase(s, idx), anchor: gather(s.anchor, idx), r_m: gather(s.r_m, idx) };
}

/**
 * The run restricted to records with t in [t0_s, t1_s] (see the file header). `rows` keeps the count of records
 * read (the report's `source.rows` describes the file, not the window).
 */
export function cropLog(log: NavLog, t0_s: number, t1_s: number): NavLog {
  return {
    ...log,
    state: cropState(log.state, t0_s, t1_s),
    channels: log.channels.map((c) => cropChannel(c, t0_s, t1_s)),
    ...(log.imu ? { imu: cropImu(log.imu, t0_s, t1_s) } : {}),
    ...(log.tdoa ? { tdoa: cropTdoa(log.tdoa, t0_s, t1_s) } : {}),
    ...(log.ranges ? { ranges: cropRanges(log.ranges, t0_s, t1_s) } : {}),
    resets: log.resets.filter((t) => t >= t0_s && t <= t1_s),
    diagnostics: log.diagnostics.filter((d) => d.t === undefined || (d.t >= t0_s && d.t <= t1_s)),
  };
}

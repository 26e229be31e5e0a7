/**
 * A row plan: what each column of a file carries (compiled once from the header, or once per key set of JSON
 * records) and how one row of parsed cells is dispatched to the run's streams.
 *
 * A row of a wide log may hold a state, any channels' updates, raw sensor samples, or several of these: each stream
 * only gets the rows where it has values (a state = any state column present; a channel update = a finite innovation
 * or NIS for that channel; IMU = any gyro/acc/mag value; TDOA / range = a finite distance).
 */
import { choleskyFactor } from '../linalg/cholesky';
import { checkQuaternion, lastAttitudeDefect, quaternionFromEuler, quaternionFromMatrix, type AttitudeStatus } from './attitude';
import { ChannelBuilder, RunBuilder, Slot, StreamBuilder } from './builder';
import type { ColumnSpec, FileSpec, Mapping } from './mapping';
import { normalizeName, resolveMappedRole, resolveName, type Role } from './names';
import { unitFactor } from './units';
import { clip } from './diagnostics';

/** Cell kinds: skipped, number, string (ids), time (number or wall-clock string). */
export const CELL_SKIP = 0;
/** A numeric cell. */
export const CELL_NUM = 1;
/** A string cell (ids). */
export const CELL_STR = 2;
/** The time cell: a number, or a wall-clock string. */
export const CELL_TIME = 3;

/** What a file is to the run. */
export type FileRole = 'estimate' | 'measurements' | 'reference';

/** Inputs of {@link compilePlan}. */
export interface PlanInput {
  /** Column names (header cells; `col_<n>` for empty or missing ones, n 1-based). */
  names: string[];
  /** 1-based character column of each header cell, for diagnostics. */
  charColumns?: number[];
  /** Line of the header (0 when none). */
  headerLine: number;
  spec?: FileSpec;
  mapping?: Mapping;
  role: FileRole;
  file: string;
  run: RunBuilder;
  /** Report columns the plan does not use (CSV: yes; JSON: once per key, by the caller). */
  reportUnknown: boolean;
  /** Mapping file name, for diagnostics about the mapping. */
  mapName?: string;
}

/**
 * A state column copied as is (`variance`: a variance, stored as its square root; `sigma`: a 1-sigma column, which
 * must not be negative).
 */
interface SimpleCol { col: number; slot: Slot; variance: boolean; sigma: boolean; name: string }
interface AttitudeGroup {
  prefix: string;
  quat?: number[];
  mat?: number[];
  euler?: number[];
  slots: Slot[];
}
interface ChannelPlan {
  ch: ChannelBuilder;
  nu: { col: number; index: number }[];
  s: { col: number; i: number; j: number; mirrored: boolean }[];
  nis: number;
  id: number;
  rejected: number;
  nuSlot: Slot;
  sSlot?: Slot;
  nisSlot?: Slot;
  idSlot: Slot;
  rejSlot?: Slot;
}

/** A compiled plan for one column layout. */
export class RowPlan {
  ncols = 0;
  cellKind = new Uint8Array(0);
  scale = new Float64Array(0);
  offset = new Float64Array(0);
  names: string[] = [];
  timeCol = -1;
  timeZone = 'UTC';
  timeOffset_s = 0;
  fileIdx = 0;
  file = '';
  target: StreamBuilder;
  stateCols: number[] = [];
  simple: SimpleCol[] = [];
  attitude: AttitudeGroup[] = [];
  channels: ChannelPlan[] = [];
  imu: { col: number; slot: Slot }[] = [];
  tdoa?: { i: number; j: number; d: number; iSlot: Slot; jSlot: Slot; dSlot: Slot };
  ranges: { col: number; anchor?: string; anchorCol: number }[] = [];
  rangeAnchorSlot: Slot;
  rangeSlot: Slot;
  anchorPos: { cols: number[]; anchorCol: number }[] = [];
  reset = -1;
  rowIndex = 0;
  private noTimeNoted = false;
  private readonly q = new Float64Array(4);
  /** The current row's time (an array: see StreamBuilder.addBoxed). */
  private readonly tBox = new Float64Array(1);
  private readonly m = new Float64Array(9);
  private scratch = new Float64Array(0);
  private chol = new Float64Array(0);
  /**
   * The 1-based character column of cell `c` of the row being dispatched, for diagnostics about a cell (set by the
   * reader: the CSV reader finds the cell in the row, the JSON reader gives the record's column).
   */
  cellColumn: (c: number) => number | undefined = () => undefined;

  constructor(readonly run: RunBuilder, role: FileRole) {
    this.target = role === 'reference' ? run.reference : run.state;
    this.rangeAnchorSlot = run.ranges.slot('anchor');
    this.rangeSlot = run.ranges.slot('r');
  }

  /**
   * Dispatch one row. `vals` holds each numeric cell already in SI (NaN when missing), `strs` the string cells.
   */
  row(vals: Float64Array, strs: (string | undefined)[], line: number): void {
    const run = this.run;
    run.rows++;
    let t: number;
    if (this.timeCol >= 0) {
      t = vals[this.timeCol];
      if (t !== t) {
        let any = false;
        for (let c = 0; c < this.ncols; c++) if (this.cellKind[c] === CELL_NUM && vals[c] === vals[c]) { any = true; break; }
        if (any) {
          run.diagnostics.report('warning', 'bad-value', this.file, line,
            `This row has no time value in column "${clip(this.names[this.timeCol])}"; it is left out.`, { key: `${this.file}:notime` });
        }
        this.rowIndex++;
        return;
      }
    } else {
      t = this.rowIndex;
      if (!this.noTimeNoted) {
        this.noTimeNoted = true;
        run.diagnostics.report('warning', 'note', this.file, 0,
          'No time column was found (t, time, timestamp or stamp, or one mapped to role t); records are numbered 0, 1, 2... instead of timed.');
      }
    }
    this.rowIndex++;
    this.tBox[0] = t;
    const fi = this.fileIdx;

    // State
    const stateCols = this.stateCols;
    if (stateCols.length > 0) {
      let any = false;
      for (let k = 0; k < stateCols.length; k++) if (vals[stateCols[k]] === vals[stateCols[k]]) { any = true; break; }
      if (any) {
        const target = this.target;
        const i = target.addBoxed(this.tBox, line, fi);
        const simple = this.simple;
        for (let k = 0; k < simple.length; k++) {
          const s = simple[k];
          let v = vals[s.col];
          if (s.variance && v === v) {
            if (v < 0) {
              run.diagnostics.report('warning', 'bad-value', this.file, line,
                `Negative variance ${v} in column "${clip(this.names[s.col])}"; left out.`,
                { t, key: `${this.file}:negvar:${s.col}`, ...columnOf(this.cellColumn(s.col)) });
              v = NaN;
            } else v = Math.sqrt(v);
          } else if (s.sigma && v < 0) {
            // A standard deviation cannot be negative (squared it would pass as a valid variance downstream):
            // missing, reported on its first occurrence per column with the count of the others (diagnostics.ts).
            run.diagnostics.report('warning', 'bad-value', this.file, line,
              `Column "${clip(this.names[s.col])}" holds the negative standard deviation ${v}; it is treated as missing, ` +
              'as is every negative value of this column.',
              { t, key: `first:${this.file}:negsigma:${s.col}`, ...columnOf(this.cellColumn(s.col)) });
            v = NaN;
          }
          s.slot.arr[i] = v;
        }
        const att = this.attitude;
        for (let k = 0; k < att.length; k++) this.writeAttitude(att[k], vals, i, line);
      }
    }

    // Channels
    const channels = this.channels;
    for (let k = 0; k < channels.length; k++) {
      const p = channels[k];
      const nu = p.nu;
      let any = p.nis >= 0 && vals[p.nis] === vals[p.nis];
      if (!any) for (let u = 0; u < nu.length; u++) if (vals[nu[u].col] === vals[nu[u].col]) { any = true; break; }
      if (!any) continue;
      const ch = p.ch;
      const d = ch.dof;
      const i = ch.addBoxed(this.tBox, line, fi);
      const nuArr = p.nuSlot.arr;
      for (let u = 0; u < nu.length; u++) if (nu[u].index < d) nuArr[i * d + nu[u].index] = vals[nu[u].col];
      if (p.nisSlot) p.nisSlot.arr[i] = vals[p.nis];
      if (p.id >= 0) {
        const s = strs[p.id];
        if (s !== undefined && s !== '') p.idSlot.arr[i] = ch.ids.id(s);
      }
      if (p.rejSlot) p.rejSlot.arr[i] = vals[p.rejected];
      if (p.sSlot) this.writeS(p, vals, i, line);
    }

    // Raw IMU
    const imu = this.imu;
    if (imu.length > 0) {
      let any = false;
      for (let k = 0; k < imu.length; k++) if (vals[imu[k].col] === vals[imu[k].col]) { any = true; break; }
      if (any) {
        const i = run.imu.addBoxed(this.tBox, line, fi);
        for (let k = 0; k < imu.length; k++) imu[k].slot.arr[i] = vals[imu[k].col];
      }
    }

    // Raw TDOA
    const td = this.tdoa;
    if (td && vals[td.d] === vals[td.d]) {
      const i = run.tdoa.addBoxed(this.tBox, line, fi);
      td.dSlot.arr[i] = vals[td.d];
      const si = td.i >= 0 ? strs[td.i] : undefined;
      const sj = td.j >= 0 ? strs[td.j] : undefined;
      td.iSlot.arr[i] = si ? run.anchorIds.id(si) : NaN;
      td.jSlot.arr[i] = sj ? run.anchorIds.id(sj) : NaN;
    }

    // Ranges
    const ranges = this.ranges;
    for (let k = 0; k < ranges.length; k++) {
      const r = ranges[k];
      const v = vals[r.col];
      if (v !== v) continue;
      const id = r.anchor ?? (r.anchorCol >= 0 ? strs[r.anchorCol] : undefined);
      const i = run.ranges.addBoxed(this.tBox, line, fi);
      this.rangeSlot.arr[i] = v;
      this.rangeAnchorSlot.arr[i] = id ? run.anchorIds.id(id) : NaN;
    }

    // Anchor positions given in columns
    for (let k = 0; k < this.anchorPos.length; k++) {
      const a = this.anchorPos[k];
      const id = strs[a.anchorCol];
      if (!id) continue;
      const x = vals[a.cols[0]], y = vals[a.cols[1]], z = vals[a.cols[2]];
      if (x === x && y === y && z === z) run.addAnchor(id, [x, y, z], this.file, line);
    }

    if (this.reset >= 0) {
      const v = vals[this.reset];
      if (v === v && v !== 0) run.resets.push(t);
    }
  }

  private attitudeNote(status: AttitudeStatus, defect: number, what: string, t: number, line: number, g: AttitudeGroup): void {
    if (status === 'ok') return;
    const fix = status === 'repaired' ? 'normalised and kept' : 'this epoch\'s attitude is left out';
    this.run.diagnostics.report('warning', 'bad-rotation', this.file, line,
      `${what} is off by ${defect.toPrecision(3)} (more than 1e-3); ${fix}.`, { t, key: `${this.file}:rot:${g.prefix}` });
  }

  private writeAttitude(g: AttitudeGroup, vals: Float64Array, i: number, line: number): void {
    const q = this.q;
    const t = this.tBox[0];
    if (g.quat) {
      for (let k = 0; k < 4; k++) q[k] = vals[g.quat[k]];
      if (q[0] !== q[0] || q[1] !== q[1] || q[2] !== q[2] || q[3] !== q[3]) return;
      const st = checkQuaternion(q);
      if (st !== 'ok') this.attitudeNote(st, lastAttitudeDefect[0], `The ${g.prefix}quaternion's norm`, t, line, g);
    } else if (g.mat) {
      const m = this.m;
      for (let k = 0; k < 9; k++) m[k] = vals[g.mat[k]];
      for (let k = 0; k < 9; k++) if (m[k] !== m[k]) return;
      const st = quaternionFromMatrix(q, m);
      if (st !== 'ok') this.attitudeNote(st, lastAttitudeDefect[0], `The ${g.prefix}rotation matrix (largest of |det-1| and |R R^T - I|)`, t, line, g);
    } else if (g.euler) {
      const roll = vals[g.euler[0]], pitch = vals[g.euler[1]], yaw = vals[g.euler[2]];
      if (roll !== roll || pitch !== pitch || yaw !== yaw) return;
      quaternionFromEuler(q, roll, pitch, yaw);
    } else return;
    for (let k = 0; k < 4; k++) g.slots[k].arr[i] = q[k];
  }

  private writeS(p: ChannelPlan, vals: Float64Array, i: number, line: number): void {
    const d = p.ch.dof;
    const t = this.tBox[0];
    const sc = p.s;
    let any = false;
    for (let k = 0; k < sc.length; k++) if (vals[sc[k].col] === vals[sc[k].col]) { any = true; break; }
    if (!any) return;
    const arr = (p.sSlot as Slot).arr;
    const base = i * d * d;
    for (let k = 0; k < d * d; k++) arr[base + k] = 0;
    for (let k = 0; k < d; k++) arr[base + k * d + k] = NaN;
    let asym = 0;
    for (let k = 0; k < sc.length; k++) {
      const s = sc[k];
      const v = vals[s.col];
      if (v !== v) continue;
      if (s.i < 0) {
        for (let k = 0; k < d; k++) arr[base + k * d + k] = v;
        continue;
      }
      if (s.i >= d || s.j >= d) continue;
      if (s.mirrored && s.i > s.j) {
        const other = arr[base + s.j * d + s.i];
        const scale = Math.max(Math.abs(v), Math.abs(other), Number.MIN_VALUE);
        asym = Math.max(asym, Math.abs(v - other) / scale);
        // both triangles given: keep their mean
        const mean = 0.5 * (v + other);
        arr[base + s.i * d + s.j] = mean;
        arr[base + s.j * d + s.i] = mean;
        continue;
      }
      arr[base + s.i * d + s.j] = v;
      if (!s.mirrored || s.i < s.j) arr[base + s.j * d + s.i] = v;
    }
    const ch = p.ch.name;
    if (asym > 1e-6) {
      this.run.diagnostics.report('warning', 'bad-covariance', this.file, line,
        `The innovation covariance of channel ${clip(ch)} is not symmetric (relative difference ${asym.toPrecision(3)}); the mean of both triangles is used.`,
        { t, channel: ch });
    }
    for (let k = 0; k < d; k++) if (arr[base + k * d + k] !== arr[base + k * d + k]) return;
    if (this.chol.length < d * d) { this.chol = new Float64Array(d * d); this.scratch = new Float64Array(d * d); }
    for (let k = 0; k < d * d; k++) this.scratch[k] = arr[base + k];
    if (!choleskyFactor(this.scratch, 0, d, this.chol, 0)) {
      this.run.diagnostics.report('warning', 'bad-covariance', this.file, line,
        `The innovation covariance of channel ${clip(ch)} is not positive definite.`, { t, channel: ch });
    }
  }
}

function roleKey(r: Role): string | undefined {
  switch (r.kind) {
    case 'time': return 'time';
    case 'state': return `state:${r.name}`;
    case 'nu': return `nu:${r.channel}:${r.index}`;
    case 's': return `s:${r.channel}:${r.i}:${r.j}`;
    case 'nis': case 'id': case 'rejected': return `${r.kind}:${r.channel}`;
    case 'imu': return `imu:${r.name}`;
    case 'range': return r.anchor !== undefined ? `range:${r.anchor}` : undefined;
    case 'anchor_pos': return undefined;
    case 'ignore': return undefined;
    default: return r.kind;
  }
}

/** Index of a column named by a mapping key (1-based position or name), or -1. */
function findColumn(key: string, normNames: string[]): number {
  if (/^\d+$/.test(key)) {
    const k = Number(key) - 1;
    return k >= 0 && k < normNames.length ? k : -1;
  }
  return normNames.indexOf(normalizeName(key));
}

/** Largest number of components of one channel's innovation (the mapping schema's dof limit too). */
export const MAX_COMPONENTS = 64;

const QUAT = ['q_w', 'q_x', 'q_y', 'q_z'];
const MAT = ['r_11', 'r_12', 'r_13', 'r_21', 'r_22', 'r_23', 'r_31', 'r_32', 'r_33'];
const EULER = ['roll', 'pitch', 'yaw'];

/** Compile the plan of one column layout; diagnostics about columns go to the run. */
export function compilePlan(input: PlanInput): RowPlan {
  const { names, run, file, spec } = input;
  const plan = new RowPlan(run, input.role);
  const n = names.length;
  plan.ncols = n;
  plan.names = names;
  plan.file = file;
  plan.fileIdx = run.fileIndex(file);
  plan.cellKind = new Uint8Array(n);
  plan.scale = new Float64Array(n).fill(1);
  plan.offset = new Float64Array(n);
  plan.timeZone = spec?.time?.zone ?? 'UTC';
  const timeOffset = spec?.time?.offset_s ?? 0;
  const diag = run.diagnostics;
  const where = (c: number): { column?: number } => (input.charColumns ? { column: input.charColumns[c] } : {});
  const normNames = names.map(normalizeName);

  // Mapping entries by column index.
  const mapped = new Map<number, ColumnSpec>();
  for (const [key, raw] of Object.entries(spec?.columns ?? {})) {
    const c = findColumn(key, normNames);
    const cs: ColumnSpec = typeof raw === 'string' ? { role: raw } : raw;
    if (c < 0) {
      diag.report('warning', 'unknown-column', input.mapName ?? file, 0,
        `The mapping names column "${clip(key)}", which ${file} does not have (its columns: ${clip(names.join(', '))}).`,
        { key: `once:${file}:mapmiss:${key}` });
      continue;
    }
    mapped.set(c, cs);
  }

  const roles: (Role | undefined)[] = new Array(n);
  const taken = new Map<string, number>();
  const anchorFromCol = new Map<number, number>();
  for (const [c, cs] of mapped) {
    if (cs.anchorFrom === undefined) continue;
    const ac = findColumn(cs.anchorFrom, normNames);
    if (ac < 0) {
      diag.report('error', 'parse-error', input.mapName ?? file, 0,
        `The mapping's column "${clip(names[c])}" takes its anchor from "${clip(cs.anchorFrom)}", which ${file} does not have.`,
        { key: `once:${file}:anchorFrom:${cs.anchorFrom}` });
    } else anchorFromCol.set(c, ac);
  }
  const anchorSources = new Set(anchorFromCol.values());
  for (let c = 0; c < n; c++) {
    const cs = mapped.get(c);
    let role: Role | undefined;
    let scale = 1;
    if (cs) {
      role = resolveMappedRole(cs.role);
      if (!role) continue; // reported by parseMapping
      const unit = cs.unit !== undefined ? unitFactor(cs.unit) : undefined;
      if (role.kind === 'time') scale = unit ?? (spec?.time?.unit ? (unitFactor(spec.time.unit) ?? 1) : 1);
      else if (role.kind === 'state' || role.kind === 'imu') scale = unit !== undefined ? (role.kind === 'state' && role.variance ? unit * unit : unit) : role.scale;
      else scale = unit ?? 1;
      scale *= cs.scale ?? 1;
      plan.offset[c] = cs.offset ?? 0;
      if (role.kind === 'range' && cs.anchor !== undefined) role = { kind: 'range', anchor: cs.anchor };
    } else {
      role = resolveName(normNames[c]);
      if (role?.kind === 'range' && role.anchor !== undefined) {
        // Keep the anchor id's case as written (names are compared lower-cased).
        const raw = /^\s*range[._\-\s]+(.+?)\s*$/i.exec(names[c]);
        if (raw) role = { kind: 'range', anchor: raw[1] };
      }
      if (role?.kind === 'time') {
        const explicit = /_(s|ms|us|ns)$/.test(normNames[c]);
        scale = explicit ? role.scale : (spec?.time?.unit ? (unitFactor(spec.time.unit) ?? 1) : 1);
      } else if (role?.kind === 'state' || role?.kind === 'imu') scale = role.scale;
    }
    if (!role) {
      if (input.reportUnknown && !anchorSources.has(c)) {
        diag.report('info', 'unknown-column', file, input.headerLine,
          `Column "${clip(names[c])}" is not a name of the log conventions and is not mapped; it is ignored (a mapping file can give its role).`,
          { ...where(c), key: `once:${file}:unknown:${names[c]}` });
      }
      continue;
    }
    if (role.kind === 'ignore') continue;
    if ((role.kind === 'nu' && !(role.index < MAX_COMPONENTS)) || (role.kind === 's' && (!(role.i < MAX_COMPONENTS) || !(role.j < MAX_COMPONENTS)))) {
      const index = role.kind === 'nu' ? role.index : Math.max(role.i, role.j);
      diag.report('warning', 'unknown-column', file, input.headerLine,
        `Column "${clip(names[c])}" names innovation component ${Number.isFinite(index) ? index : 'beyond any size'}; a channel has at most ${MAX_COMPONENTS} components (0..${MAX_COMPONENTS - 1}), so the column is ignored.`,
        { ...where(c), key: `once:${file}:bigindex:${names[c]}` });
      continue;
    }
    const key = roleKey(role);
    if (key !== undefined) {
      const prev = taken.get(key);
      if (prev !== undefined) {
        diag.report('info', 'unknown-column', file, input.headerLine,
          `Column "${clip(names[c])}" repeats the role of column "${clip(names[prev])}" (${clip(key.replace(/:/g, ' '))}); the first is used and this one ignored.`,
          { ...where(c), key: `once:${file}:dup:${names[c]}` });
        continue;
      }
      taken.set(key, c);
    }
    roles[c] = role;
    plan.scale[c] = scale;
    if (role.kind === 'time') plan.offset[c] += timeOffset;
  }

  // Columns read as strings: ids and anchor-id sources.
  const strCols = new Set<number>();
  for (let c = 0; c < n; c++) {
    const r = roles[c];
    if (r && (r.kind === 'id' || r.kind === 'tdoa_i' || r.kind === 'tdoa_j' || r.kind === 'range_id')) strCols.add(c);
  }
  for (const ac of anchorSources) { strCols.add(ac); plan.cellKind[ac] = CELL_STR; }

  const target = plan.target;
  const stateCols = new Set<number>();
  const stateByName = new Map<string, number>();
  let rangeIdCol = -1;
  for (let c = 0; c < n; c++) if (roles[c]?.kind === 'range_id') rangeIdCol = c;
  const anchorAxes = new Map<number, number[]>();

  for (let c = 0; c < n; c++) {
    const r = roles[c];
    if (!r) continue;
    plan.cellKind[c] = strCols.has(c) ? CELL_STR : CELL_NUM;
    switch (r.kind) {
      case 'time':
        plan.timeCol = c;
        plan.cellKind[c] = CELL_TIME;
        break;
      case 'state': {
        let name = r.name;
        if (input.role === 'reference' && name.startsWith('gt_')) name = name.slice(3);
        stateByName.set(name, c);
        stateCols.add(c);
        break;
      }
      case 'nu': case 's': case 'nis': case 'id': case 'rejected':
        break; // grouped below
      case 'imu':
        plan.imu.push({ col: c, slot: run.imu.slot(r.name) });
        break;
      case 'tdoa_i': case 'tdoa_j': case 'tdoa':
        break;
      case 'range_id':
        break;
      case 'range':
        plan.ranges.push({ col: c, anchor: r.anchor, anchorCol: anchorFromCol.get(c) ?? rangeIdCol });
        break;
      case 'anchor_pos': {
        const ac = anchorFromCol.get(c);
        if (ac === undefined) {
          diag.report('warning', 'unknown-column', input.mapName ?? file, 0,
            `Column "${clip(names[c])}" is mapped as an anchor coordinate but has no anchorFrom; it is ignored.`);
          break;
        }
        let axes = anchorAxes.get(ac);
        if (!axes) { axes = [-1, -1, -1]; anchorAxes.set(ac, axes); }
        axes[r.axis] = c;
        break;
      }
      case 'reset':
        plan.reset = c;
        break;
      case 'ignore':
        break;
    }
  }
  for (const [ac, axes] of anchorAxes) {
    if (axes.every((a) => a >= 0)) plan.anchorPos.push({ cols: axes, anchorCol: ac });
  }

  // Attitude groups (state and ground truth): quaternion, else matrix, else Euler.
  for (const prefix of ['', 'gt_']) {
    const pick = (list: string[]): number[] | undefined => {
      const cols = list.map((k) => stateByName.get(prefix + k) ?? -1);
      return cols.every((x) => x >= 0) ? cols : undefined;
    };
    const quat = pick(QUAT), mat = pick(MAT), euler = pick(EULER);
    const g: AttitudeGroup = { prefix, slots: [] };
    if (quat) g.quat = quat;
    else if (mat) g.mat = mat;
    else if (euler) g.euler = euler;
    const used = new Set([...(quat ?? []), ...(g.mat ?? []), ...(g.euler ?? [])]);
    if (g.quat || g.mat || g.euler) {
      g.slots = QUAT.map((k) => target.slot(prefix + k));
      plan.attitude.push(g);
    }
    // Partial or extra attitude columns.
    for (const k of [...QUAT, ...MAT, ...EULER]) {
      const c = stateByName.get(prefix + k);
      if (c === undefined || used.has(c)) continue;
      stateByName.delete(prefix + k);
      if (EULER.includes(k) && !g.quat && !g.mat && !g.euler) {
        // An incomplete set of Euler angles (e.g. heading only) is kept as its own column, in radians.
        plan.simple.push({ col: c, slot: target.slot(prefix + k), variance: false, sigma: false, name: prefix + k });
        diag.report('info', 'note', file, input.headerLine,
          `Column "${clip(names[c])}" gives ${prefix}${k} without the other Euler angles; it is kept as column ${prefix}${k} (rad), no quaternion is formed.`,
          { ...where(c), key: `once:${file}:partial:${names[c]}` });
        continue;
      }
      diag.report('info', 'unknown-column', file, input.headerLine,
        `Column "${clip(names[c])}" (${prefix}${k}) is not used: the attitude is taken from ${g.quat ? 'the quaternion' : g.mat ? 'the rotation matrix' : g.euler ? 'the Euler angles' : 'nowhere, its set is incomplete'}.`,
        { ...where(c), key: `once:${file}:att:${names[c]}` });
    }
    for (const k of [...QUAT, ...MAT, ...EULER]) if (used.has(stateByName.get(prefix + k) ?? -1)) stateByName.delete(prefix + k);
  }
  for (const [name, c] of stateByName) {
    const r = roles[c];
    const variance = r?.kind === 'state' && r.variance === true;
    plan.simple.push({ col: c, slot: target.slot(name), variance, sigma: !variance && isSigmaName(name), name });
  }
  plan.stateCols = [...stateCols];

  // Channels
  const chans = new Map<string, { nu: { col: number; index: number }[]; s: { col: number; i: number; j: number }[]; nis: number; id: number; rejected: number }>();
  const chan = (name: string) => {
    let p = chans.get(name);
    if (!p) { p = { nu: [], s: [], nis: -1, id: -1, rejected: -1 }; chans.set(name, p); }
    return p;
  };
  for (let c = 0; c < n; c++) {
    const r = roles[c];
    if (!r) continue;
    if (r.kind === 'nu') chan(r.channel).nu.push({ col: c, index: r.index });
    else if (r.kind === 's') chan(r.channel).s.push({ col: c, i: r.i, j: r.j });
    else if (r.kind === 'nis') chan(r.channel).nis = c;
    else if (r.kind === 'id') chan(r.channel).id = c;
    else if (r.kind === 'rejected') chan(r.channel).rejected = c;
  }
  for (const [name, p] of chans) {
    if (p.nu.length === 0 && p.nis < 0) {
      for (const c of [...p.s.map((s) => s.col), p.id, p.rejected]) {
        if (c < 0) continue;
        diag.report('info', 'unknown-column', file, input.headerLine,
          `Column "${clip(names[c])}" belongs to channel ${clip(name)}, which has no innovation (nu_${clip(name)}) or NIS (nis_${clip(name)}) column; it is ignored.`,
          { ...where(c), key: `once:${file}:orphan:${names[c]}` });
        plan.cellKind[c] = CELL_SKIP;
      }
      continue;
    }
    const ch = run.channel(name);
    const wanted = p.nu.length > 0 ? Math.max(...p.nu.map((x) => x.index)) + 1 : 0;
    if (ch.dof === 0) {
      const cs = input.mapping?.channels?.[name];
      if (wanted > 0) ch.dof = wanted;
      else if (cs?.dof !== undefined) ch.dof = cs.dof;
      else {
        ch.dof = 1;
        diag.report('info', 'note', file, input.headerLine,
          `Channel ${clip(name)} logs only its NIS; its degrees of freedom are taken as 1 (the mapping file's channels.${clip(name)}.dof can set them).`,
          { channel: name, key: `once:${file}:dof:${name}` });
      }
      ch.angleComponents = new Array<boolean>(ch.dof).fill(false);
      for (const k of cs?.angleComponents ?? []) if (k < ch.dof) ch.angleComponents[k] = true;
    } else if (wanted > ch.dof) {
      diag.report('warning', 'parse-error', file, input.headerLine,
        `Channel ${clip(name)} has ${wanted} innovation components here but ${ch.dof} before; components beyond ${ch.dof - 1} are ignored.`,
        { channel: name, key: `once:${file}:dofmismatch:${name}` });
    }
    const given = new Set(p.s.map((s) => `${s.i},${s.j}`));
    const cp: ChannelPlan = {
      ch,
      nu: p.nu,
      s: p.s.map((s) => ({ ...s, mirrored: s.i >= 0 && s.i !== s.j && given.has(`${s.j},${s.i}`) })),
      nis: p.nis,
      id: p.id,
      rejected: p.rejected,
      nuSlot: ch.slot('nu', ch.dof),
      idSlot: ch.slot('id'),
    };
    // Process the upper triangle first so the lower one can compare against it.
    cp.s.sort((a, b) => (a.i > a.j ? 1 : 0) - (b.i > b.j ? 1 : 0));
    if (p.s.length > 0) { cp.sSlot = ch.slot('S', ch.dof * ch.dof); ch.hasS = true; }
    if (p.nis >= 0) { cp.nisSlot = ch.slot('nis'); ch.hasNis = true; }
    if (p.rejected >= 0) cp.rejSlot = ch.slot('rejected');
    plan.channels.push(cp);
  }

  // Raw TDOA
  let ti = -1, tj = -1, td = -1;
  for (let c = 0; c < n; c++) {
    const r = roles[c];
    if (r?.kind === 'tdoa_i') ti = c; else if (r?.kind === 'tdoa_j') tj = c; else if (r?.kind === 'tdoa') td = c;
  }
  if (td >= 0) {
    const tb = run.tdoa;
    plan.tdoa = { i: ti, j: tj, d: td, iSlot: tb.slot('i'), jSlot: tb.slot('j'), dSlot: tb.slot('d') };
  }
  return plan;
}

/** Whether a state column name is a 1-sigma column (`sigma_<state>`, names.ts). */
function isSigmaName(name: string): boolean {
  return name.startsWith('sigma_');
}

/** `{ column }` when the column is known, else nothing (for a diagnostic's extra fields). */
function columnOf(column: number | undefined): { column?: number } {
  return column !== undefined ? { column } : {};
}

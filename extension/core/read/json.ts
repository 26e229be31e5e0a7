/**
 * JSON Lines and JSON logs (log-conventions.md, "JSON records").
 *
 * Each record is flattened to the wide names of the conventions (`p: [x, y, z]` -> `p_x p_y p_z`, an update of
 * channel `tdoa` with `nu: [a]` -> `nu_tdoa_0`...) and dispatched through the same row plans as CSV rows, compiled
 * once per distinct key set. A JSON file (an array of records, or `{ "meta": {...}, "records": [...] }`) is scanned
 * byte by byte and only one record at a time is decoded, so a large file is never one string.
 */
import type { RunBuilder } from './builder';
import { ByteBuffer, LineSplitter } from './bytes';
import { IdTextCache, normalizeId } from './ids';
import { isJsonObject, lineColumnOf, parseJson, type JsonValue } from './jsonValue';
import type { FileSpec, Mapping } from './mapping';
import { CELL_NUM, CELL_STR, CELL_TIME, compilePlan, type FileRole, type RowPlan } from './plan';
import { NUM_INVALID, NUM_NONFINITE, NUM_OK, numStatus, parseNumberText } from './numbers';
import { decodeUtf8 } from './utf8';
import { parseWallClock } from './wallclock';
import { choleskyFactor, asymmetry } from '../linalg/cholesky';
import { clip } from './diagnostics';
import { JsonLineScanner, LEAF_NUM, LEAF_STR, SCAN_BLANK, SCAN_GENERAL, SCAN_OK, jsonLineHotPath, numberTag, stringTag } from './jsonShape';

/** Options of one JSON / JSON Lines file of a run. */
export interface JsonFileOptions {
  spec?: FileSpec;
  mapping?: Mapping;
  role: FileRole;
  mapName?: string;
  /** Size of the file in bytes, when known: used to reserve the columns once instead of growing them. */
  sizeHint?: number;
}

/** JSON Lines records looked at before the column storage is reserved from the file size. */
const RESERVE_AFTER_LINES = 1024;

const AXES = ['x', 'y', 'z'];
const VECTORS = ['p', 'v', 'bg', 'ba', 'att'];

type Flat = Map<string, JsonValue>;

/** Dispatches decoded JSON records of one file into the run. */
export class JsonRecordSink {
  private readonly plans = new Map<string, RowPlan>();
  private readonly quatOrder: 'wxyz' | 'xyzw';
  private warnedKinds = new Set<string>();
  /** The covariance `P` of the record last flattened. */
  private flatP: JsonValue | undefined;
  /** While learning a shape, diagnostics are counted in {@link learnDiags} instead of reported. */
  private learning = false;
  /** Column of the record being dispatched (the column a plan's cell diagnostics give). */
  private rowColumn = 1;
  private learnDiags = 0;
  /** Learned record shapes (jsonShape.ts) by shape hash. */
  private readonly shapes = new Map<number, FastShape[]>();
  private shapeCount = 0;
  private readonly ids = new IdTextCache();

  constructor(private readonly run: RunBuilder, readonly file: string, private readonly opts: JsonFileOptions) {
    this.quatOrder = opts.mapping?.conventions?.quaternionOrder ?? 'wxyz';
    run.fileIndex(file);
  }

  private diag(kind: 'parse-error' | 'bad-value' | 'unknown-column' | 'bad-covariance', line: number, column: number,
    message: string, key?: string): void {
    if (this.learning) { this.learnDiags++; return; }
    const severity = kind === 'parse-error' ? 'error' : kind === 'unknown-column' ? 'info' : 'warning';
    this.run.diagnostics.report(severity, kind, this.file, line, message, { column, key: key ?? `${this.file}:${kind}` });
  }

  /** Metadata object (`meta`). */
  meta(value: JsonValue, line: number): void {
    if (!isJsonObject(value)) {
      this.diag('parse-error', line, 1, '"meta" should be an object of key: value pairs.');
      return;
    }
    for (const [k, v] of Object.entries(value)) {
      const key = k.toLowerCase();
      if (key === 'anchors' && Array.isArray(v)) {
        for (const a of v) {
          if (isJsonObject(a) && (typeof a.id === 'string' || typeof a.id === 'number') && Array.isArray(a.p)
            && a.p.length === 3 && a.p.every((x) => typeof x === 'number' && Number.isFinite(x))) {
            this.run.addAnchor(normalizeId(String(a.id)), [a.p[0] as number, a.p[1] as number, a.p[2] as number], this.file, line);
          } else this.diag('parse-error', line, 1, 'An anchor in "meta.anchors" should be {"id": ..., "p": [x, y, z]}.');
        }
        continue;
      }
      if (key === 'reset' || key === 'resets') {
        for (const t of Array.isArray(v) ? v : [v]) if (typeof t === 'number' && Number.isFinite(t)) this.run.resets.push(t);
        continue;
      }
      this.run.meta[key] = typeof v === 'string' ? v : JSON.stringify(v);
    }
  }

  /** One record that starts at `line`, `column`. */
  record(value: JsonValue, line: number, column: number): void {
    if (!isJsonObject(value)) {
      this.diag('parse-error', line, column, 'A record should be a JSON object {...}; this one is not, and is skipped.');
      return;
    }
    const kind = recordKind(value);
    if (kind === 'reset') {
      const t = value.t ?? value.time;
      if (typeof t === 'number' && Number.isFinite(t)) this.run.resets.push(t);
      else this.diag('parse-error', line, column, 'A reset record needs a numeric "t".');
      this.run.rows++;
      return;
    }
    if (!FLAT_KINDS.has(kind)) {
      if (!this.warnedKinds.has(kind)) {
        this.warnedKinds.add(kind);
        this.diag('unknown-column', line, column, `Records of kind "${clip(kind)}" are not part of the log conventions; they are skipped.`, `once:${this.file}:kind:${kind}`);
      }
      return;
    }
    const flat = this.flatten(value, kind, line, column);
    if (flat) this.dispatch(flat, line, column, this.flatP);
  }

  /**
   * The record's values under the wide names of the conventions (state, update, imu, tdoa and range records), in the
   * order the names first appear; a state record's covariance `P` is left in {@link flatP}. Undefined when the record
   * is skipped (with a diagnostic). Its only effects are diagnostics, which are counted instead while {@link learning}.
   */
  private flatten(value: { [key: string]: JsonValue }, kind: string, line: number, column: number): Flat | undefined {
    const flat: Flat = new Map();
    let P: JsonValue | undefined;
    this.flatP = undefined;
    const add = (name: string, v: JsonValue): void => { flat.set(name, v); };
    const vector = (prefix: string, name: string, v: JsonValue, axes: string[] = AXES): void => {
      if (Array.isArray(v)) {
        if (v.length !== axes.length) {
          this.diag('parse-error', line, column, `"${clip(name)}" should have ${axes.length} numbers, it has ${v.length}.`, `${this.file}:len:${name}`);
        }
        v.forEach((x, k) => { if (k < axes.length) add(`${prefix}${name}_${axes[k]}`, x); });
      } else if (isJsonObject(v)) {
        const keys = Object.keys(v);
        if (axes.some((a) => !keys.includes(a))) {
          this.diag('parse-error', line, column, `"${clip(name)}" as an object should give ${axes.join(', ')}; it gives ${clip(keys.join(', ')) || 'nothing'}.`, `${this.file}:obj:${name}`);
        }
        for (const [ax, x] of Object.entries(v)) add(`${prefix}${name}_${ax}`, x);
      } else add(`${prefix}${name}`, v);
    };
    const quat = (prefix: string, v: JsonValue): void => {
      if (Array.isArray(v) && v.length === 4) {
        const order = this.quatOrder === 'xyzw' ? ['x', 'y', 'z', 'w'] : ['w', 'x', 'y', 'z'];
        v.forEach((x, k) => add(`${prefix}q_${order[k]}`, x));
      } else if (isJsonObject(v)) {
        for (const [ax, x] of Object.entries(v)) add(`${prefix}q_${ax}`, x);
      } else this.diag('parse-error', line, column, `"${prefix}q" should be 4 numbers.`, `${this.file}:len:q`);
    };
    const matrix = (prefix: string, v: JsonValue): void => {
      const flatM = Array.isArray(v) && v.every(Array.isArray) ? (v as JsonValue[][]).flat() : v;
      if (Array.isArray(flatM) && flatM.length === 9) flatM.forEach((x, k) => add(`${prefix}r_${Math.floor(k / 3) + 1}${(k % 3) + 1}`, x));
      else this.diag('parse-error', line, column, `"${prefix}R" should be a 3x3 matrix.`, `${this.file}:len:R`);
    };
    const stateFields = (prefix: string, obj: { [key: string]: JsonValue }): void => {
      for (const [k, v] of Object.entries(obj)) {
        if (prefix === '' && (k === 'kind')) continue;
        if (VECTORS.includes(k)) vector(prefix, k, v);
        else if (k === 'q') quat(prefix, v);
        else if (k === 'R') matrix(prefix, v);
        else if (prefix === '' && k === 'sigma' && isJsonObject(v)) {
          for (const [sk, sv] of Object.entries(v)) vector('sigma_', sk, sv);
        } else if (prefix === '' && (k === 'gt' || k === 'true') && isJsonObject(v)) stateFields('gt_', v);
        else if (prefix === '' && k === 'P') P = v;
        else add(prefix + k, v);
      }
    };

    switch (kind) {
      case 'state':
        stateFields('', value);
        break;
      case 'update': {
        const ch = value.channel;
        if (typeof ch !== 'string' || ch === '') {
          this.diag('parse-error', line, column, 'An update record needs "channel": "<name>"; skipped.');
          return undefined;
        }
        const nuV = value.nu ?? value.innov;
        const SV = value.S;
        if (Array.isArray(nuV) && Array.isArray(SV)
          && (SV.length !== nuV.length || SV.some((row) => Array.isArray(row) && row.length !== nuV.length))) {
          this.diag('parse-error', line, column,
            `The update of channel ${ch} has ${nuV.length} innovation component(s) but "S" is not ${nuV.length} x ${nuV.length}.`, `${this.file}:Sshape`);
        }
        for (const [k, v] of Object.entries(value)) {
          if (k === 'kind' || k === 'channel') continue;
          if (k === 'nu' || k === 'innov') {
            if (Array.isArray(v)) v.forEach((x, i) => add(`nu_${ch}_${i}`, x)); else add(`nu_${ch}_0`, v);
          } else if (k === 'S') {
            if (Array.isArray(v)) {
              v.forEach((row, i) => {
                if (Array.isArray(row)) row.forEach((x, j) => add(`s_${ch}_${i}_${j}`, x));
                else add(`s_${ch}_${i}_${i}`, row);
              });
            } else add(`s_${ch}_0_0`, v);
          } else if (k === 'nis') add(`nis_${ch}`, v);
          else if (k === 'id') add(`id_${ch}`, v === null ? null : String(v));
          else if (k === 'rejected') add(`rejected_${ch}`, v === true ? 1 : v === false ? 0 : v);
          else add(k, v);
        }
        break;
      }
      case 'imu':
        for (const [k, v] of Object.entries(value)) {
          if (k === 'kind') continue;
          if (k === 'gyro' || k === 'acc' || k === 'mag') vector('', k, v); else add(k, v);
        }
        break;
      case 'tdoa':
        for (const [k, v] of Object.entries(value)) {
          if (k === 'kind') continue;
          if (k === 'i') add('tdoa_i', v === null ? null : String(v));
          else if (k === 'j') add('tdoa_j', v === null ? null : String(v));
          else if (k === 'd') add('tdoa', v);
          else add(k, v);
        }
        break;
      case 'range':
        for (const [k, v] of Object.entries(value)) {
          if (k === 'kind') continue;
          if (k === 'anchor') add('range_id', v === null ? null : String(v));
          else if (k === 'r') add('range', v);
          else add(k, v);
        }
        break;
    }
    this.flatP = P;
    return flat;
  }

  /** The plan of a key set (compiled, with its diagnostics, the first time the set is seen). */
  private planFor(names: string[], line: number): RowPlan {
    const sig = names.join('\u0001');
    let plan = this.plans.get(sig);
    if (!plan) {
      plan = compilePlan({ names, headerLine: line, spec: this.opts.spec, mapping: this.opts.mapping, role: this.opts.role,
        file: this.file, run: this.run, reportUnknown: true, mapName: this.opts.mapName });
      plan.cellColumn = () => this.rowColumn;
      this.plans.set(sig, plan);
    }
    return plan;
  }

  /** Cell `c` (named `name`) of a row of `plan` from the JSON value `v`: into `vals[c]` or `strs[c]`. */
  private cell(plan: RowPlan, c: number, name: string, v: JsonValue, vals: Float64Array, strs: (string | undefined)[],
    line: number, column: number): void {
    const kind = plan.cellKind[c];
    if (kind === CELL_STR) {
      strs[c] = v === null ? undefined : normalizeId(typeof v === 'string' ? v : String(v));
      return;
    }
    vals[c] = NaN;
    if (kind !== CELL_NUM && kind !== CELL_TIME) return;
    let x: number;
    if (typeof v === 'number') x = v;
    else if (v === null) return;
    else if (typeof v === 'boolean') x = v ? 1 : 0;
    else if (typeof v === 'string') {
      x = parseNumberText(v);
      if (numStatus === NUM_INVALID) {
        if (kind === CELL_TIME) {
          const w = parseWallClock(v, plan.timeZone);
          if (!Number.isNaN(w)) { vals[c] = w + plan.offset[c]; return; }
        }
        this.diag('parse-error', line, column, `"${clip(name)}": "${clip(v)}" is not a number; treated as missing.`, `${this.file}:num:${name}`);
        return;
      }
      if (numStatus !== NUM_OK && numStatus !== NUM_NONFINITE) return;
    } else {
      this.diag('parse-error', line, column, `"${clip(name)}" should be a number, not ${Array.isArray(v) ? 'an array' : 'an object'}.`, `${this.file}:num:${name}`);
      return;
    }
    if (Number.isNaN(x)) return;
    if (!Number.isFinite(x)) {
      this.diag('bad-value', line, column, `"${clip(name)}" holds the non-finite value ${x}; treated as missing.`, `${this.file}:inf:${name}`);
      return;
    }
    vals[c] = x * plan.scale[c] + plan.offset[c];
  }

  private dispatch(flat: Flat, line: number, column: number, P: JsonValue | undefined): void {
    const names = [...flat.keys()];
    const plan = this.planFor(names, line);
    const vals = new Float64Array(names.length);
    const strs: (string | undefined)[] = new Array<string | undefined>(names.length);
    names.forEach((name, c) => this.cell(plan, c, name, flat.get(name) as JsonValue, vals, strs, line, column));
    const target = plan.target;
    const before = target.length;
    const droppedBefore = target.dropped;
    this.rowColumn = column;
    plan.row(vals, strs, line);
    if (P !== undefined && target.dropped === droppedBefore) {
      if (target.length === before) {
        this.diag('parse-error', line, column, 'A covariance "P" was given in a record with no time or state; skipped.');
      } else this.covariance(P, target.length - 1, line, column, vals[plan.timeCol]);
    }
  }

  /**
   * The learned shape of the line `scanner` just scanned, learning it when new: the shape's tagged text
   * (jsonShape.ts) goes through the general parser and {@link flatten}, which tells which flattened column each leaf
   * fills. A shape whose records raise diagnostics while flattened, carry a covariance `P`, are not one of the
   * flattened kinds, or put a string into a numeric column (or a number into an id column) is marked `general`: its
   * lines keep taking the general path. Undefined when too many shapes were seen already (general path too).
   */
  shapeFor(scanner: JsonLineScanner, line: number): FastShape | undefined {
    const list = this.shapes.get(scanner.hash);
    if (list) for (const s of list) if (scanner.sameShape(s.bytes)) return s;
    if (this.shapeCount >= MAX_SHAPES) return undefined;
    const shape = this.learnShape(scanner, line);
    this.shapeCount++;
    if (list) list.push(shape); else this.shapes.set(scanner.hash, [shape]);
    return shape;
  }

  private learnShape(scanner: JsonLineScanner, line: number): FastShape {
    const bytes = scanner.shape.slice(0, scanner.shapeLength);
    const general: FastShape = { bytes, general: true, leafCol: new Int32Array(0), leafStr: new Uint8Array(0),
      init: new Float64Array(0), consts: [], vals: new Float64Array(0), strs: [] };
    const parsed = parseJson(scanner.taggedText());
    if (!parsed.ok || !isJsonObject(parsed.value)) return general;
    const kind = recordKind(parsed.value);
    if (!FLAT_KINDS.has(kind)) return general;
    this.learning = true;
    this.learnDiags = 0;
    let flat: Flat | undefined;
    try {
      flat = this.flatten(parsed.value, kind, line, scanner.column);
    } finally {
      this.learning = false;
    }
    if (!flat || this.learnDiags > 0 || this.flatP !== undefined) return general;
    const leaves = scanner.leaves;
    const leafStr = new Uint8Array(leaves);
    for (let p = 0, k = 0; p < bytes.length; p++) {
      if (bytes[p] === LEAF_NUM) k++;
      else if (bytes[p] === LEAF_STR) leafStr[k++] = 1;
    }
    const names = [...flat.keys()];
    const plan = this.planFor(names, line);
    const leafCol = new Int32Array(leaves).fill(-1);
    const consts: FastShape['consts'] = [];
    const init = new Float64Array(names.length);
    for (let c = 0; c < names.length; c++) {
      const v = flat.get(names[c]) as JsonValue;
      const cellKind = plan.cellKind[c];
      const numeric = cellKind === CELL_NUM || cellKind === CELL_TIME;
      init[c] = cellKind === CELL_STR ? 0 : NaN;
      if (typeof v === 'number') {
        const k = -v - 1.25;
        if (Number.isInteger(k) && k >= 0 && k < leaves && numberTag(k) === v && leafStr[k] === 0) {
          if (cellKind === CELL_STR) return general;
          if (numeric) leafCol[k] = c;
          continue;
        }
        consts.push({ c, name: names[c], v });
      } else if (typeof v === 'string') {
        const k = v.charCodeAt(0) === 1 ? Number(v.slice(1)) : -1;
        if (!(Number.isInteger(k) && k >= 0 && k < leaves && stringTag(k) === v && leafStr[k] === 1)) return general;
        if (numeric) return general;
        if (cellKind === CELL_STR) leafCol[k] = c;
      } else if (v === null || typeof v === 'boolean') consts.push({ c, name: names[c], v });
      else return general;
    }
    return { bytes, general: false, plan, leafCol, leafStr, init, consts, vals: new Float64Array(names.length),
      strs: new Array<string | undefined>(names.length).fill(undefined) };
  }

  /** One record of a learned (not general) shape, straight from the leaves `scanner` found in the line buffer `b`. */
  fastRecord(shape: FastShape, scanner: JsonLineScanner, b: Uint8Array, line: number): void {
    const plan = shape.plan as RowPlan;
    const vals = shape.vals;
    const strs = shape.strs;
    vals.set(shape.init);
    for (const k of shape.consts) this.cell(plan, k.c, k.name, k.v, vals, strs, line, scanner.column);
    const leafCol = shape.leafCol;
    const leafStr = shape.leafStr;
    const num = scanner.num;
    const scale = plan.scale;
    const offset = plan.offset;
    for (let k = 0; k < leafCol.length; k++) {
      const c = leafCol[k];
      if (c < 0) continue;
      if (leafStr[k] === 1) strs[c] = this.ids.text(b, scanner.strStart[k], scanner.strEnd[k]);
      else vals[c] = num[k] * scale[c] + offset[c];
    }
    this.rowColumn = scanner.column;
    plan.row(vals, strs, line);
  }

  private covariance(P: JsonValue, index: number, line: number, column: number, t: number): void {
    const run = this.run;
    if (!isJsonObject(P) || !Array.isArray(P.states) || !Array.isArray(P.matrix)) {
      this.diag('parse-error', line, column, '"P" should be {"states": [names...], "matrix": [[...], ...]}.');
      return;
    }
    const states = P.states.map(String);
    const n = states.length;
    if (!run.pStates) run.pStates = states;
    else if (run.pStates.join(',') !== states.join(',')) {
      this.diag('parse-error', line, column, `"P.states" differ from the first record's (${clip(run.pStates.join(', '))}); this P is skipped.`, `${this.file}:pstates`);
      return;
    }
    const rows = P.matrix;
    const m = new Float64Array(n * n);
    let ok = rows.length === n;
    for (let r = 0; ok && r < n; r++) {
      const row = rows[r];
      if (!Array.isArray(row) || row.length !== n) { ok = false; break; }
      for (let c = 0; c < n; c++) {
        const x = row[c];
        m[r * n + c] = typeof x === 'number' ? x : NaN;
      }
    }
    if (!ok) {
      this.diag('parse-error', line, column, `"P.matrix" should be ${n} rows of ${n} numbers.`, `${this.file}:pshape`);
      return;
    }
    const slot = run.state.slot('__P', n * n);
    slot.arr.set(m, index * n * n);
    const asym = asymmetry(m, 0, n);
    const l = new Float64Array(n * n);
    if (!(asym <= 1e-6) || !choleskyFactor(m, 0, n, l, 0)) {
      const why = !(asym <= 1e-6) ? (Number.isNaN(asym) ? 'holds a non-finite value' : `is not symmetric (relative difference ${asym.toPrecision(3)})`) : 'is not positive definite';
      run.diagnostics.report('warning', 'bad-covariance', this.file, line, `The state covariance P ${why}.`,
        { column, t, key: `${this.file}:P` });
    }
  }
}

/** Record kinds flattened into rows (the others are resets or unknown). */
const FLAT_KINDS = new Set(['state', 'update', 'imu', 'tdoa', 'range']);

/** Most record shapes learned per file; records of further shapes take the general path. */
const MAX_SHAPES = 4096;

/** A learned record shape: which flattened column each leaf fills (-1: none), or `general` when it must not be used. */
interface FastShape {
  bytes: Uint8Array;
  general: boolean;
  plan?: RowPlan;
  leafCol: Int32Array;
  /** 1 for a string leaf. */
  leafStr: Uint8Array;
  /** A row's values before its leaves: 0 for id columns, NaN otherwise (as the general path leaves them). */
  init: Float64Array;
  /** Cells given by the shape itself (`null`, `true`, `false`, or a number they became). */
  consts: { c: number; name: string; v: JsonValue }[];
  /** The row buffers, reused record after record. */
  vals: Float64Array;
  strs: (string | undefined)[];
}

/** The kind of a record object: its `kind` in lower case, else inferred from its keys. */
function recordKind(value: { [key: string]: JsonValue }): string {
  const kindRaw = value.kind;
  return typeof kindRaw === 'string' ? kindRaw.toLowerCase() : inferKind(value);
}

function inferKind(v: { [key: string]: JsonValue }): string {
  if ('channel' in v) return 'update';
  if ('gyro' in v || 'acc' in v) return 'imu';
  if ('anchor' in v && 'r' in v) return 'range';
  if ('i' in v && 'j' in v && 'd' in v) return 'tdoa';
  return 'state';
}

/** Reads a JSON Lines file: one record per line. */
export class JsonlFileReader {
  private readonly splitter: LineSplitter;
  private readonly sink: JsonRecordSink;
  private readonly scanner = new JsonLineScanner();
  private any = false;
  private lines = 0;
  private lineBytes = 0;

  constructor(run: RunBuilder, readonly file: string, private readonly opts: JsonFileOptions) {
    this.sink = new JsonRecordSink(run, file, opts);
    this.splitter = new LineSplitter((b, s, e, line) => this.onLine(b, s, e, line, run));
  }

  /**
   * After the first lines, reserve every stream that grew in proportion to the file size (as the CSV reader does),
   * so the columns are allocated once instead of doubling (each doubling copies and faults in fresh memory).
   */
  private countLine(bytes: number, run: RunBuilder): void {
    this.lines++;
    this.lineBytes += bytes;
    const size = this.opts.sizeHint;
    if (this.lines !== RESERVE_AFTER_LINES || !size || size <= 0) return;
    const lines = (size / (this.lineBytes / this.lines)) * 1.02; // estimated lines of the whole file, with a margin
    for (const b of run.builders()) {
      if (b.length === 0) continue;
      const want = Math.max(b.length + 1, Math.ceil((b.length / this.lines) * lines));
      // Under a memory budget that would not grant the whole reservation, growth (and decimation) go on as before.
      if (b.guard && b.guard.capacityFor(b, want) < want) continue;
      b.reserve(want);
    }
  }

  /** Bytes consumed so far. */
  get bytesRead(): number {
    return this.splitter.bytesRead;
  }

  private onLine(b: Uint8Array, s: number, e: number, line: number, run: RunBuilder): void {
    if (this.lines < RESERVE_AFTER_LINES) this.countLine(e - s + 1, run);
    // The hot path (jsonShape.ts): lines of a learned shape fill their row straight from bytes.
    const scanned = jsonLineHotPath.enabled ? this.scanner.scan(b, s, e) : SCAN_GENERAL;
    if (scanned === SCAN_BLANK) return;
    if (scanned === SCAN_OK) {
      const shape = this.sink.shapeFor(this.scanner, line);
      if (shape && !shape.general) {
        this.any = true;
        this.sink.fastRecord(shape, this.scanner, b, line);
        return;
      }
    }
    const text = decodeUtf8(b, s, e);
    if (text.trim() === '') return;
    this.any = true;
    const r = parseJson(text);
    if (!r.ok) {
      const lc = lineColumnOf(text, r.offset);
      run.diagnostics.report('error', 'parse-error', this.file, line, `Not a JSON record: ${clip(r.message, 120)}.`,
        { column: lc.column, key: `${this.file}:json` });
      return;
    }
    let col = 1;
    while (col <= text.length && /\s/.test(text[col - 1])) col++;
    this.sink.record(r.value, line, col);
  }

  /** Feed a chunk. */
  push(chunk: Uint8Array): void {
    this.splitter.push(chunk);
  }

  /** End of the file. */
  finish(run: RunBuilder): void {
    this.splitter.finish();
    if (!this.any) run.diagnostics.report('warning', 'parse-error', this.file, 0, 'The file holds no records.');
  }
}

const BOM = [0xef, 0xbb, 0xbf];
const OPEN_OBJ = 0x7b, CLOSE_OBJ = 0x7d, OPEN_ARR = 0x5b, CLOSE_ARR = 0x5d, QUOTE = 0x22, BACKSLASH = 0x5c;

/**
 * Reads a JSON file holding an array of records or `{ "meta": {...}, "records": [...] }`, decoding one record at a
 * time. A record's line is the line of its opening brace.
 */
export class JsonFileReader {
  private readonly sink: JsonRecordSink;
  private depth = 0;
  private inStr = false;
  private esc = false;
  private line = 1;
  private col = 0;
  private lastCR = false;
  private mode: 'start' | 'array' | 'object' | 'done' | 'failed' = 'start';
  private recDepth = -1;
  private capturing = false;
  private readonly cap = new ByteBuffer();
  private capLine = 0;
  private capCol = 0;
  private capDepth = 0;
  private capKey: string | undefined;
  private objState: 'key' | 'colon' | 'value' | 'after' = 'key';
  private inKey = false;
  private readonly keyBuf = new ByteBuffer();
  private key = '';
  private records = 0;
  bytesRead = 0;
  private bom = 0;  // bytes of a BOM dropped so far; -1 when the file has none

  constructor(private readonly run: RunBuilder, readonly file: string, opts: JsonFileOptions) {
    this.sink = new JsonRecordSink(run, file, opts);
  }

  private fail(message: string): void {
    this.run.diagnostics.report('error', 'parse-error', this.file, this.line, message, { column: Math.max(1, this.col) });
    this.mode = 'failed';
    this.capturing = false;
  }

  /** Feed a chunk. */
  push(chunk: Uint8Array): void {
    let start = 0;
    const before = this.bytesRead;
    this.bytesRead += chunk.length;
    if (this.mode === 'failed') return;
    // Drop a UTF-8 byte order mark at the start of the file.
    while (this.bom >= 0 && before + start < 3 && start < chunk.length) {
      if (chunk[start] === BOM[before + start]) { start++; this.bom++; } else { this.bom = -1; }
    }
    for (let k = start; k < chunk.length; k++) {
      const c = chunk[k];
      if (this.capturing) this.cap.push(c);
      // position
      if (c === 10) { if (!this.lastCR) { this.line++; } this.col = 0; this.lastCR = false; }
      else if (c === 13) { this.line++; this.col = 0; this.lastCR = true; }
      else { this.lastCR = false; if ((c & 0xc0) !== 0x80) this.col++; }

      if (this.inStr) {
        if (this.esc) this.esc = false;
        else if (c === BACKSLASH) this.esc = true;
        else if (c === QUOTE) {
          this.inStr = false;
          if (this.inKey) { this.inKey = false; this.key = decodeUtf8(this.keyBuf.bytes, 0, this.keyBuf.length); this.objState = 'colon'; }
          continue;
        }
        if (this.inKey) this.keyBuf.push(c);
        continue;
      }
      if (c === 0x20 || c === 0x0a || c === 0x0d || c === 0x09) continue;
      if (this.mode === 'done') { this.fail('Unexpected text after the end of the JSON document.'); return; }
      if (this.mode === 'start') {
        if (c === OPEN_ARR) { this.mode = 'array'; this.recDepth = 1; this.depth = 1; continue; }
        if (c === OPEN_OBJ) { this.mode = 'object'; this.depth = 1; this.objState = 'key'; continue; }
        this.fail('A JSON log should start with [ (an array of records) or { ("meta" and "records").');
        return;
      }
      if (c === QUOTE) {
        this.inStr = true;
        if (this.mode === 'object' && this.depth === 1 && !this.capturing) {
          if (this.objState === 'key') { this.inKey = true; this.keyBuf.clear(); }
          else if (this.objState === 'value') this.objState = 'after';
        } else if (this.depth === this.recDepth && !this.capturing) this.scalarRecord();
        continue;
      }
      if (c === OPEN_OBJ || c === OPEN_ARR) {
        if (!this.capturing) {
          if (this.mode === 'object' && this.depth === 1) {
            if (this.objState !== 'value') { this.fail(`Expected a key in the top-level object, found "${String.fromCharCode(c)}".`); return; }
            if (this.key === 'records' && c === OPEN_ARR) { this.recDepth = 2; this.depth++; continue; }
            this.startCapture(c, this.key);
          } else if (this.depth === this.recDepth) this.startCapture(c, undefined);
        }
        this.depth++;
        continue;
      }
      if (c === CLOSE_OBJ || c === CLOSE_ARR) {
        this.depth--;
        if (this.depth < 0) { this.fail('A closing bracket has no opening one.'); return; }
        if (this.capturing && this.depth === this.capDepth) this.endCapture();
        else if (this.mode === 'object' && this.depth === 1 && !this.capturing) this.objState = 'after';
        if (this.depth === 0) this.mode = 'done';
        continue;
      }
      if (this.capturing) continue;
      if (this.mode === 'object' && this.depth === 1) {
        if (c === 0x3a && this.objState === 'colon') this.objState = 'value';
        else if (c === 0x2c && (this.objState === 'after' || this.objState === 'value')) this.objState = 'key';
        else if (this.objState === 'value') { /* scalar value at the top level: ignored */ }
        else if (this.objState === 'after' && c !== 0x2c) { /* rest of a scalar */ }
        else { this.fail(`Unexpected "${String.fromCharCode(c)}" in the top-level object.`); return; }
        continue;
      }
      if (this.depth === this.recDepth && c !== 0x2c) this.scalarRecord();
    }
    if (this.capturing) { /* capture continues in the next chunk */ }
  }

  private scalarWarned = false;
  private scalarRecord(): void {
    if (this.scalarWarned) return;
    this.scalarWarned = true;
    this.run.diagnostics.report('error', 'parse-error', this.file, this.line,
      'The records array holds a value that is not an object; such values are skipped.', { column: Math.max(1, this.col) });
  }

  private startCapture(c: number, key: string | undefined): void {
    this.capturing = true;
    this.cap.clear();
    this.cap.push(c);
    this.capLine = this.line;
    this.capCol = Math.max(1, this.col);
    this.capDepth = this.depth;
    this.capKey = key;
  }

  private endCapture(): void {
    this.capturing = false;
    const text = decodeUtf8(this.cap.bytes, 0, this.cap.length);
    this.cap.clear();
    const r = parseJson(text);
    if (!r.ok) {
      const lc = lineColumnOf(text, r.offset);
      this.run.diagnostics.report('error', 'parse-error', this.file, this.capLine + lc.line - 1,
        `Not a valid JSON record: ${r.message}.`, { column: lc.line === 1 ? this.capCol + lc.column - 1 : lc.column, key: `${this.file}:json` });
      return;
    }
    if (this.capKey === undefined) {
      this.records++;
      this.sink.record(r.value, this.capLine, this.capCol);
    } else if (this.capKey === 'meta') this.sink.meta(r.value, this.capLine);
    else if (this.capKey === 'records') {
      this.run.diagnostics.report('error', 'parse-error', this.file, this.capLine,
        '"records" should be an array of records [...]; it is not, so no records were read.', { column: this.capCol });
    } else {
      this.run.diagnostics.report('info', 'unknown-column', this.file, this.capLine,
        `Top-level key "${this.capKey}" is not "meta" or "records"; it is ignored.`, { column: this.capCol, key: `once:${this.file}:top:${this.capKey}` });
    }
  }

  /** End of the file. */
  finish(): void {
    if (this.mode === 'failed') return;
    if (this.mode === 'start') {
      this.run.diagnostics.report('warning', 'parse-error', this.file, 0, 'The file is empty.');
      return;
    }
    if (this.mode !== 'done' || this.inStr) {
      this.run.diagnostics.report('error', 'parse-error', this.file, this.line,
        'The JSON document ends before its brackets are closed (is the file cut short?).', { column: Math.max(1, this.col) });
    }
    if (this.records === 0 && this.mode === 'done') {
      this.run.diagnostics.report('warning', 'parse-error', this.file, 0, 'The JSON document holds no records.');
    }
  }
}

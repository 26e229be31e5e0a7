/**
 * The mapping file: how a log whose names, units or conventions differ from the log conventions is read, and which
 * other files belong to the same run. Shape documented in `schema/mapping.schema.json` (validated with ajv).
 *
 * Conventions of the mapping file:
 * - Paths are relative to the mapping file.
 * - Column keys are header names (compared after `normalizeName`) or 1-based column positions (`"3"`); an empty
 *   header cell at position n is named `col_n` (same 1-based n).
 * - A column's `unit` converts its values to SI; `scale` and `offset` then apply (v_SI = v * unit * scale + offset).
 * - Top-level `header`, `delimiter`, `skipRows`, `skipFooter`, `time`, `columns` describe the main log; `files` lists
 *   the run's other files (measurement files with their own columns), `reference` a reference trajectory.
 *
 * Example (beside `A3.csv`, as `A3.csv.map.json`):
 * ```json
 * { "columns": { "%time": {"role": "t", "unit": "ns"}, "field.stamp": "ignore",
 *     "field.distanceFromTag": {"role": "range", "anchorFrom": "field.id"},
 *     "field.x": {"role": "anchor_x", "anchorFrom": "field.id"} } }
 * ```
 */
import Ajv, { type ErrorObject } from 'ajv';
import type { Diagnostic, ImuSpecRaw } from '../model';
import schema from '../../../schema/mapping.schema.json';
import { lineColumnOf, parseJson, type JsonValue } from './jsonValue';
import { resolveMappedRole } from './names';
import type { UnitName } from './units';
import { isKnownZone } from './wallclock';
import { clip } from './diagnostics';

/** One column of a mapped file. */
export interface ColumnSpec {
  /** A convention name (`p_x`, `nu_tdoa_0`, `range`...), `anchor_x|y|z`, or `ignore`. */
  role: string;
  unit?: UnitName;
  scale?: number;
  offset?: number;
  /** For `range`: the anchor id of this column. */
  anchor?: string;
  /** For `range` / `anchor_*`: the column (name or 1-based position) holding the anchor id. */
  anchorFrom?: string;
}

/** Time stamps of a file. */
export interface TimeSpec {
  /** Unit of numeric stamps (a unit on the time column wins). */
  unit?: 's' | 'ms' | 'us' | 'ns';
  /** Seconds added to every stamp. */
  offset_s?: number;
  /** Zone of wall-clock strings that carry none: `UTC`, `+08:00` or an IANA name. Default UTC. */
  zone?: string;
}

/** How to read one file. */
export interface FileSpec {
  /** Path relative to the mapping file (absent for the main log). */
  path?: string;
  /** `estimate` (state records), `measurements` (default for listed files), `reference` (a reference trajectory). */
  role?: 'estimate' | 'measurements' | 'reference';
  format?: 'csv' | 'jsonl' | 'json';
  /** false: no header row; columns are known by 1-based position. */
  header?: boolean;
  delimiter?: ',' | ';' | '\t';
  /** Lines skipped at the start. */
  skipRows?: number;
  /** Rows left out at the end: a count, or `non-numeric` (trailing rows whose first cell is neither number nor time). */
  skipFooter?: number | 'non-numeric';
  time?: TimeSpec;
  columns?: Record<string, ColumnSpec | string>;
}

/** Per-channel settings. */
export interface ChannelSpec {
  /** Degrees of freedom when only `nis_<ch>` is logged. */
  dof?: number;
  /** 0-based innovation components that are angles (wrapped to (-pi, pi]). */
  angleComponents?: number[];
}

/** A validated mapping file. */
export interface Mapping extends FileSpec {
  version?: 1;
  frame?: 'ENU' | 'NED';
  conventions?: {
    /** Order of 4-element quaternion arrays in JSON records (default wxyz). */
    quaternionOrder?: 'wxyz' | 'xyzw';
    attitudeErrorSide?: 'nav' | 'body';
    errorGroup?: 'SO3xR3' | 'SE3' | 'SE23';
  };
  channels?: Record<string, ChannelSpec>;
  files?: (FileSpec & { path: string })[];
  reference?: (FileSpec & { path: string }) | string;
  anchors?: string | { id: string | number; p: [number, number, number] }[];
  imuSpec?: ImuSpecRaw;
  meta?: Record<string, string | number>;
}

let validator: ReturnType<Ajv['compile']> | undefined;

function validate(value: JsonValue): ErrorObject[] {
  if (!validator) {
    const ajv = new Ajv({ allErrors: true, strict: false });
    validator = ajv.compile(schema);
  }
  return validator(value) ? [] : (validator.errors ?? []);
}

/** Keep the most useful ajv errors: drop `oneOf` wrappers when a branch error explains more. */
function usefulErrors(errors: ErrorObject[]): ErrorObject[] {
  let specific = errors.filter((e) => e.keyword !== 'oneOf' && e.keyword !== 'if');
  // A value that fails every branch of a oneOf gets one error per branch; when a branch of the right type failed
  // deeper or on a keyword other than type, the other branches' "must be <type>" errors only confuse.
  specific = specific.filter((e) => !(e.keyword === 'type' && e.schemaPath.includes('/oneOf/')
    && specific.some((o) => o !== e && o.keyword !== 'type' && o.instancePath.startsWith(e.instancePath))));
  specific = specific.filter((e) => !(e.keyword === 'const' && e.schemaPath.includes('/oneOf/')
    && specific.some((o) => o !== e && o.instancePath === e.instancePath && o.keyword !== 'const')));
  return specific.length > 0 ? specific : errors;
}

function describeError(e: ErrorObject): { path: string; text: string } {
  const where = e.instancePath === '' ? 'the top level' : clip(e.instancePath);
  const params = e.params as Record<string, unknown>;
  if (e.keyword === 'additionalProperties') {
    const key = String(params.additionalProperty);
    return { path: `${e.instancePath}/${key}`, text: `${where} has an unknown property "${clip(key)}"` };
  }
  if (e.keyword === 'enum') {
    const allowed = (params.allowedValues as unknown[]).map((v) => JSON.stringify(v)).join(', ');
    return { path: e.instancePath, text: `${where} must be one of ${allowed}` };
  }
  return { path: e.instancePath, text: `${where} ${e.message ?? 'is not valid'}` };
}

/**
 * Parse and validate a mapping file. Never throws: problems are diagnostics naming the mapping file, the JSON path and
 * the line and column; `mapping` is absent when the file cannot be used.
 */
export function parseMapping(text: string, name: string): { mapping?: Mapping; diagnostics: Diagnostic[] } {
  const diagnostics: Diagnostic[] = [];
  const positions = new Map<string, number>();
  const clean = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  const parsed = parseJson(clean, positions);
  if (!parsed.ok) {
    const lc = lineColumnOf(clean, parsed.offset);
    diagnostics.push({ severity: 'error', kind: 'parse-error', file: name, line: lc.line, column: lc.column,
      message: `The mapping file is not valid JSON: ${clip(parsed.message, 120)}.` });
    return { diagnostics };
  }
  const at = (path: string): { line: number; column: number } => {
    let p = path;
    for (;;) {
      const off = positions.get(p);
      if (off !== undefined) return lineColumnOf(clean, off);
      if (p === '') return { line: 1, column: 1 };
      p = p.slice(0, p.lastIndexOf('/'));
    }
  };
  const errors = usefulErrors(validate(parsed.value));
  for (const e of errors) {
    const d = describeError(e);
    const lc = at(d.path);
    diagnostics.push({ severity: 'error', kind: 'parse-error', file: name, line: lc.line, column: lc.column,
      message: `Mapping file: ${d.text}.` });
  }
  if (errors.length > 0) return { diagnostics };
  const mapping = parsed.value as unknown as Mapping;
  // Checks the schema cannot express.
  const checkColumns = (cols: Record<string, ColumnSpec | string> | undefined, base: string): void => {
    if (!cols) return;
    for (const [key, spec] of Object.entries(cols)) {
      const role = typeof spec === 'string' ? spec : spec.role;
      if (!resolveMappedRole(role)) {
        const path = `${base}/columns/${key.replace(/~/g, '~0').replace(/\//g, '~1')}`;
        const lc = at(typeof spec === 'string' ? path : `${path}/role`);
        diagnostics.push({ severity: 'error', kind: 'parse-error', file: name, line: lc.line, column: lc.column,
          message: `Mapping file: ${clip(path)} has role "${clip(role)}", which is not a name of the log conventions, anchor_x/y/z or ignore.` });
      }
    }
  };
  const checkZone = (t: TimeSpec | undefined, base: string): void => {
    if (t?.zone !== undefined && !isKnownZone(t.zone)) {
      const lc = at(`${base}/time/zone`);
      diagnostics.push({ severity: 'error', kind: 'parse-error', file: name, line: lc.line, column: lc.column,
        message: `Mapping file: ${clip(base)}/time/zone "${clip(t.zone)}" is not UTC, a +HH:MM offset or a known IANA zone.` });
    }
  };
  checkColumns(mapping.columns, '');
  checkZone(mapping.time, '');
  mapping.files?.forEach((f, k) => { checkColumns(f.columns, `/files/${k}`); checkZone(f.time, `/files/${k}`); });
  if (typeof mapping.reference === 'object') {
    checkColumns(mapping.reference.columns, '/reference');
    checkZone(mapping.reference.time, '/reference');
  }
  if (diagnostics.length > 0) return { diagnostics };
  return { mapping, diagnostics };
}

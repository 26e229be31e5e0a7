/**
 * Anchor files (log-conventions.md, "Anchors"): CSV `id,x,y,z` (a header row optional) or JSON
 * `[{"id": "0", "p": [x, y, z]}]` (also `{"anchors": [...]}` and `{"id", "x", "y", "z"}` objects); metres,
 * navigation frame.
 */
import type { Anchor, Diagnostic } from '../model';
import { normalizeId } from './ids';
import { isJsonObject, lineColumnOf, parseJson, type JsonValue } from './jsonValue';
import { normalizeName } from './names';
import { NUM_OK, numStatus, parseNumberText } from './numbers';
import { clip } from './diagnostics';

/** Parse the text of an anchors file. Never throws; problems are diagnostics naming `name`, line and column. */
export function parseAnchorsText(text: string, name: string): { anchors: Anchor[]; diagnostics: Diagnostic[] } {
  const diagnostics: Diagnostic[] = [];
  const anchors: Anchor[] = [];
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  const first = body.trimStart()[0];
  const seen = new Set<string>();
  const push = (id: string, p: [number, number, number], line: number): void => {
    if (seen.has(id)) {
      diagnostics.push({ severity: 'warning', kind: 'bad-value', file: name, line,
        message: `Anchor ${clip(String(id))} is listed twice; the first position is kept.` });
      return;
    }
    seen.add(id);
    anchors.push({ id, p });
  };
  if (first === '[' || first === '{') {
    const r = parseJson(body);
    if (!r.ok) {
      const lc = lineColumnOf(body, r.offset);
      diagnostics.push({ severity: 'error', kind: 'parse-error', file: name, line: lc.line, column: lc.column,
        message: `The anchors file is not valid JSON: ${clip(r.message, 120)}.` });
      return { anchors, diagnostics };
    }
    let list: JsonValue = r.value;
    if (isJsonObject(list) && Array.isArray(list.anchors)) list = list.anchors;
    if (!Array.isArray(list)) {
      diagnostics.push({ severity: 'error', kind: 'parse-error', file: name, line: 1, column: 1,
        message: 'The anchors file should be an array of {"id": ..., "p": [x, y, z]}.' });
      return { anchors, diagnostics };
    }
    // Lines of the elements: find each element's opening brace.
    const positions = new Map<string, number>();
    parseJson(body, positions);
    const base = isJsonObject(r.value) ? '/anchors' : '';
    list.forEach((a, k) => {
      const lc = lineColumnOf(body, positions.get(`${base}/${k}`) ?? 0);
      let p: unknown[] | undefined;
      let id: JsonValue | undefined;
      if (isJsonObject(a)) {
        id = a.id;
        if (Array.isArray(a.p)) p = a.p;
        else if ('x' in a && 'y' in a && 'z' in a) p = [a.x, a.y, a.z];
      }
      if ((typeof id !== 'string' && typeof id !== 'number') || !p || p.length !== 3
        || !p.every((x) => typeof x === 'number' && Number.isFinite(x))) {
        diagnostics.push({ severity: 'error', kind: 'parse-error', file: name, line: lc.line, column: lc.column,
          message: 'An anchor should be {"id": "...", "p": [x, y, z]} with finite numbers in metres; skipped.' });
        return;
      }
      const q = p as number[];
      push(normalizeId(String(id)), [q[0], q[1], q[2]], lc.line);
    });
    return { anchors, diagnostics };
  }
  // CSV
  const lines = body.split(/\r\n|\r|\n/);
  let cols = { id: 0, x: 1, y: 2, z: 3 };
  let headerSeen = false;
  lines.forEach((raw, k) => {
    const line = k + 1;
    const text = raw.trim();
    if (text === '' || text.startsWith('#')) return;
    const delim = text.includes(';') && !text.includes(',') ? ';' : text.includes('\t') && !text.includes(',') ? '\t' : ',';
    const cells = text.split(delim).map((c) => c.trim());
    if (!headerSeen) {
      headerSeen = true;
      const names = cells.map(normalizeName);
      const find = (...alts: string[]): number => names.findIndex((n) => alts.includes(n));
      const idCol = find('id', 'anchor', 'anchor_id', 'name');
      if (idCol >= 0) {
        cols = { id: idCol, x: find('x', 'p_x', 'pos_x'), y: find('y', 'p_y', 'pos_y'), z: find('z', 'p_z', 'pos_z') };
        if (cols.x < 0 || cols.y < 0 || cols.z < 0) {
          diagnostics.push({ severity: 'error', kind: 'parse-error', file: name, line,
            message: 'The anchors header needs columns id, x, y, z.' });
          cols = { id: idCol, x: -1, y: -1, z: -1 };
        }
        return;
      }
    }
    if (cols.x < 0) return;
    const id = cells[cols.id];
    const p = [cells[cols.x], cells[cols.y], cells[cols.z]].map((c) => (c === undefined ? NaN : parseNumberText(c)));
    const ok = numStatus === NUM_OK && p.every(Number.isFinite);
    if (id === undefined || id === '' || !ok) {
      diagnostics.push({ severity: 'error', kind: 'parse-error', file: name, line, column: 1,
        message: `Anchor row "${clip(text)}" should be id,x,y,z with finite numbers in metres; skipped.` });
      return;
    }
    push(normalizeId(id), [p[0], p[1], p[2]], line);
  });
  return { anchors, diagnostics };
}

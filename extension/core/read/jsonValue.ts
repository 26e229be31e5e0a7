/**
 * A small JSON parser for log records and mapping files.
 *
 * Hand-written because `JSON.parse` rejects the `NaN` and `Infinity` tokens some log writers emit (the log conventions
 * accept them), reports errors only as an engine-specific message, and cannot tell where a value sits in the text;
 * the mapping validator needs the offset of every JSON path to name the line and column of a schema error.
 * Accepts standard JSON plus `NaN`, `-NaN`, `Infinity`, `-Infinity`, `+Infinity`.
 */

/** A JSON value as this parser returns it. */
export type JsonValue = null | boolean | number | string | JsonValue[] | { [key: string]: JsonValue };

/** Result of {@link parseJson}: a value, or an error at a character offset. */
export type JsonResult =
  | { ok: true; value: JsonValue }
  | { ok: false; offset: number; message: string };

/** Nesting deeper than this is an error (protects the stack against hostile input). */
export const MAX_JSON_DEPTH = 200;

class JsonError {
  constructor(readonly offset: number, readonly message: string) {}
}

/**
 * Parse `text` as one JSON value. When `positions` is given, it receives the character offset of every value keyed by
 * its JSON Pointer (`""` for the root, `/columns/field.x/role` ...; `~` and `/` escaped as in RFC 6901).
 */
export function parseJson(text: string, positions?: Map<string, number>): JsonResult {
  let i = 0;
  const n = text.length;

  function ws(): void {
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c === 0x20 || c === 0x0a || c === 0x0d || c === 0x09) i++;
      else break;
    }
  }
  function fail(msg: string, at = i): never {
    throw new JsonError(at, msg);
  }
  function describe(at: number): string {
    return at >= n ? 'the end of the text' : `'${text[at]}'`;
  }
  function word(w: string): boolean {
    if (text.startsWith(w, i)) { i += w.length; return true; }
    return false;
  }
  function str(): string {
    const start = i;
    i++; // opening quote
    let out = '';
    let runStart = i;
    for (;;) {
      if (i >= n) fail('a string is not closed', start);
      const c = text.charCodeAt(i);
      if (c === 0x22) { out += text.slice(runStart, i); i++; return out; }
      if (c === 0x5c) {
        out += text.slice(runStart, i);
        const e = text[i + 1];
        switch (e) {
          case '"': out += '"'; break;
          case '\\': out += '\\'; break;
          case '/': out += '/'; break;
          case 'b': out += '\b'; break;
          case 'f': out += '\f'; break;
          case 'n': out += '\n'; break;
          case 'r': out += '\r'; break;
          case 't': out += '\t'; break;
          case 'u': {
            const hex = text.slice(i + 2, i + 6);
            if (!/^[0-9a-fA-F]{4}$/.test(hex)) fail('a \\u escape needs four hex digits', i);
            out += String.fromCharCode(parseInt(hex, 16));
            i += 4;
            break;
          }
          default: fail('unknown escape in a string', i);
        }
        i += 2;
        runStart = i;
        continue;
      }
      if (c < 0x20) fail('a control character inside a string', i);
      i++;
    }
  }
  function num(): number {
    const start = i;
    let sign = 1;
    if (text[i] === '-' || text[i] === '+') { sign = text[i] === '-' ? -1 : 1; i++; }
    if (word('Infinity')) return sign * Infinity;
    if (word('NaN')) return NaN;
    if (text[start] === '+') fail('a number may not start with +', start);
    const m = /^(0|[1-9]\d*)(\.\d+)?([eE][+-]?\d+)?/.exec(text.slice(i, i + 400));
    if (!m) fail(`expected a value, found ${describe(start)}`, start);
    i += m[0].length;
    return Number(text.slice(start, i));
  }
  function value(path: string, depth: number): JsonValue {
    ws();
    if (positions) positions.set(path, i);
    if (i >= n) fail('expected a value, found the end of the text');
    const c = text[i];
    if (c === '{') {
      if (depth >= MAX_JSON_DEPTH) fail('nested too deeply');
      i++;
      const obj: { [key: string]: JsonValue } = {};
      ws();
      if (text[i] === '}') { i++; return obj; }
      for (;;) {
        ws();
        if (text[i] !== '"') fail(`expected a "quoted" key, found ${describe(i)}`);
        const key = str();
        ws();
        if (text[i] !== ':') fail(`expected ':' after a key, found ${describe(i)}`);
        i++;
        const v = value(`${path}/${key.replace(/~/g, '~0').replace(/\//g, '~1')}`, depth + 1);
        Object.defineProperty(obj, key, { value: v, enumerable: true, writable: true, configurable: true });
        ws();
        if (text[i] === ',') { i++; continue; }
        if (text[i] === '}') { i++; return obj; }
        fail(`expected ',' or '}' in an object, found ${describe(i)}`);
      }
    }
    if (c === '[') {
      if (depth >= MAX_JSON_DEPTH) fail('nested too deeply');
      i++;
      const arr: JsonValue[] = [];
      ws();
      if (text[i] === ']') { i++; return arr; }
      for (;;) {
        arr.push(value(`${path}/${arr.length}`, depth + 1));
        ws();
        if (text[i] === ',') { i++; continue; }
        if (text[i] === ']') { i++; return arr; }
        fail(`expected ',' or ']' in an array, found ${describe(i)}`);
      }
    }
    if (c === '"') return str();
    if (word('true')) return true;
    if (word('false')) return false;
    if (word('null')) return null;
    return num();
  }

  try {
    const v = value('', 0);
    ws();
    if (i < n) fail(`unexpected ${describe(i)} after the value`);
    return { ok: true, value: v };
  } catch (e) {
    if (e instanceof JsonError) return { ok: false, offset: e.offset, message: e.message };
    if (e instanceof RangeError) return { ok: false, offset: i, message: 'nested too deeply' };
    throw e;
  }
}

/** 1-based line and column of a character offset in `text` (lines end at LF, CRLF or CR). */
export function lineColumnOf(text: string, offset: number): { line: number; column: number } {
  let line = 1;
  let lineStart = 0;
  const end = Math.min(offset, text.length);
  for (let k = 0; k < end; k++) {
    const c = text.charCodeAt(k);
    if (c === 0x0a || (c === 0x0d && text.charCodeAt(k + 1) !== 0x0a)) { line++; lineStart = k + 1; }
  }
  return { line, column: end - lineStart + 1 };
}

/** Whether a JSON value is a plain object. */
export function isJsonObject(v: JsonValue | undefined): v is { [key: string]: JsonValue } {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/**
 * The JSON Lines hot path: a byte-level scanner that splits one record line into its shape and its leaf values.
 *
 * Why hand-written: decoding every line to a string, parsing it into objects (jsonValue.ts, or `JSON.parse`) and
 * flattening those objects cost about 10 s of CPU on the 400,000-record JSON Lines form of the benchmark log (issue 10),
 * eight times the CSV read. Records of one log repeat a handful of shapes (`{"kind":"state","t":#,"p":[#,#,#],...}`),
 * so each line is scanned once, straight from bytes: its *shape* is the line with every number replaced by a marker
 * byte and every string value by another (keys, brackets, `true`/`false`/`null`, and the top-level `kind` and `channel`
 * values are kept as written, since they decide the flattened column names), and its *leaves* are the numbers (parsed
 * from bytes, bit-identical to `Number()`) and the byte ranges of the strings, in document order. The record sink
 * (json.ts) learns each new shape once through the general parser and then fills the row straight from the leaves.
 *
 * The scanner declines (returns {@link SCAN_GENERAL}) anything outside that fast subset: escapes or control characters
 * in strings, non-ASCII bytes, `NaN`/`Infinity` tokens, numbers outside the JSON grammar or beyond the double range,
 * deep nesting, very long lines. Such a line takes the general path, which reports every problem with its line and
 * column. The scanner does not check the grammar (a misplaced comma only gives a shape no valid record has: learning
 * that shape through the general parser fails and its lines keep taking the general path).
 */
import { numValue, parseJsonNumber } from './numbers';

/** The line is blank (spaces and tabs only). */
export const SCAN_BLANK = 0;
/** The line was scanned into a shape and leaves. */
export const SCAN_OK = 1;
/** The line must take the general path. */
export const SCAN_GENERAL = 2;

/** Shape byte standing for a number leaf. */
export const LEAF_NUM = 0x01;
/** Shape byte standing for a string leaf. */
export const LEAF_STR = 0x02;

/**
 * Whether JSON Lines readers use this hot path (default true). Tests turn it off to compare every record with the
 * general path, which is the reference the hot path must equal bit for bit.
 */
export const jsonLineHotPath = { enabled: true };

/** Deepest nesting the scanner follows (records are at most three levels deep). */
const MAX_DEPTH = 32;
/** Longest shape the scanner builds, bytes; longer lines take the general path. */
const MAX_SHAPE = 1 << 16;

const QUOTE = 0x22, BACKSLASH = 0x5c, COMMA = 0x2c, OPEN_OBJ = 0x7b, OPEN_ARR = 0x5b, CLOSE_OBJ = 0x7d, CLOSE_ARR = 0x5d;

function isDelimiter(c: number): boolean {
  return c === COMMA || c === CLOSE_OBJ || c === CLOSE_ARR || c === 0x20 || c === 0x09;
}

/** Splits record lines into shape and leaves; one instance per file, its buffers reused line after line. */
export class JsonLineScanner {
  /** Shape bytes of the last scanned line: `shape[0, shapeLength)`. */
  shape = new Uint8Array(1024);
  shapeLength = 0;
  /** FNV-1a hash of the shape. */
  hash = 0;
  /** Number of leaves of the last line. */
  leaves = 0;
  /** Leaf k's number (number leaves). */
  num = new Float64Array(64);
  /** Leaf k's byte range within the line buffer (string leaves, without the quotes). */
  strStart = new Int32Array(64);
  strEnd = new Int32Array(64);
  /** 1-based character column of the record's opening brace. */
  column = 1;
  private readonly inObject = new Uint8Array(MAX_DEPTH);

  /** Scan the line `b[s, e)`: {@link SCAN_OK}, {@link SCAN_BLANK} or {@link SCAN_GENERAL}. */
  scan(b: Uint8Array, s: number, e: number): number {
    let i = s;
    while (i < e && (b[i] === 0x20 || b[i] === 0x09)) i++;
    if (i === e) return SCAN_BLANK;
    if (b[i] !== OPEN_OBJ) return SCAN_GENERAL;
    this.column = i - s + 1;
    if ((e - s) * 2 > MAX_SHAPE) return SCAN_GENERAL;
    if (this.shape.length < e - s) this.shape = new Uint8Array(Math.max(e - s, this.shape.length * 2));
    const shape = this.shape;
    const inObject = this.inObject;
    let n = 0;
    let h = 0x811c9dc5;
    let depth = 0;
    let leaves = 0;
    let expectKey = false;
    // The top-level key just read was `kind` or `channel`: its string value is kept in the shape.
    let keepValue = false;
    while (i < e) {
      const c = b[i];
      if (c === 0x20 || c === 0x09) { i++; continue; }
      if (c === QUOTE) {
        const q = i + 1;
        let k = q;
        for (;;) {
          if (k >= e) return SCAN_GENERAL;
          const x = b[k];
          if (x === QUOTE) break;
          if (x === BACKSLASH || x < 0x20 || x >= 0x80) return SCAN_GENERAL;
          k++;
        }
        if (expectKey || keepValue) {
          // a key (or a kept value): the quoted text as written
          if (expectKey && depth === 1) keepValue = isKindOrChannel(b, q, k);
          else keepValue = false;
          for (let p = i; p <= k; p++) { shape[n++] = b[p]; h = Math.imul(h ^ b[p], 0x01000193); }
          expectKey = false;
        } else {
          if (leaves === this.strStart.length) this.growLeaves();
          this.strStart[leaves] = q;
          this.strEnd[leaves] = k;
          leaves++;
          shape[n++] = LEAF_STR;
          h = Math.imul(h ^ LEAF_STR, 0x01000193);
        }
        i = k + 1;
        continue;
      }
      if (c === 0x2d || (c >= 0x30 && c <= 0x39)) {
        const stop = parseJsonNumber(b, i, e);
        if (stop < 0 || (stop < e && !isDelimiter(b[stop]))) return SCAN_GENERAL;
        const v = numValue[0];
        if (v - v !== 0) return SCAN_GENERAL; // beyond the double range: the general path reports it
        if (leaves === this.num.length) this.growLeaves();
        this.num[leaves++] = v;
        shape[n++] = LEAF_NUM;
        h = Math.imul(h ^ LEAF_NUM, 0x01000193);
        keepValue = false;
        i = stop;
        continue;
      }
      if (c === OPEN_OBJ || c === OPEN_ARR) {
        if (depth === MAX_DEPTH) return SCAN_GENERAL;
        inObject[depth++] = c === OPEN_OBJ ? 1 : 0;
        expectKey = c === OPEN_OBJ;
        keepValue = false;
      } else if (c === CLOSE_OBJ || c === CLOSE_ARR) {
        if (depth > 0) depth--;
        expectKey = false;
      } else if (c === COMMA) {
        expectKey = depth > 0 && inObject[depth - 1] === 1;
        keepValue = false;
      } else if (c === 0x3a) {
        // colon: the value follows
      } else if (c === 0x74 || c === 0x66 || c === 0x6e) {
        // true, false, null: kept in the shape as written
        const len = literalLength(b, i, e);
        if (len === 0) return SCAN_GENERAL;
        for (let p = i; p < i + len; p++) { shape[n++] = b[p]; h = Math.imul(h ^ b[p], 0x01000193); }
        keepValue = false;
        i += len;
        continue;
      } else return SCAN_GENERAL;
      shape[n++] = c;
      h = Math.imul(h ^ c, 0x01000193);
      i++;
    }
    this.shapeLength = n;
    this.hash = h >>> 0;
    this.leaves = leaves;
    return SCAN_OK;
  }

  private growLeaves(): void {
    const cap = this.num.length * 2;
    const num = new Float64Array(cap); num.set(this.num); this.num = num;
    const st = new Int32Array(cap); st.set(this.strStart); this.strStart = st;
    const en = new Int32Array(cap); en.set(this.strEnd); this.strEnd = en;
  }

  /**
   * The last line's shape as JSON text with every leaf replaced by a tag: number leaf k by the number
   * {@link numberTag}(k), string leaf k by the string {@link stringTag}(k). Parsing this text with the general parser
   * gives the record's structure exactly as the general path sees it (duplicate keys and all).
   */
  taggedText(): string {
    let out = '';
    let k = 0;
    for (let p = 0; p < this.shapeLength; p++) {
      const c = this.shape[p];
      if (c === LEAF_NUM) out += String(numberTag(k++));
      else if (c === LEAF_STR) out += `"\\u0001${k++}"`;
      else out += String.fromCharCode(c);
    }
    return out;
  }

  /** Whether the last line's shape equals `other` byte for byte. */
  sameShape(other: Uint8Array): boolean {
    const n = this.shapeLength;
    if (other.length !== n) return false;
    const a = this.shape;
    for (let p = 0; p < n; p++) if (a[p] !== other[p]) return false;
    return true;
  }
}

/** The number standing for number leaf `k` in {@link JsonLineScanner.taggedText} (never 0, 1 or NaN). */
export function numberTag(k: number): number {
  return -(k + 1.25);
}

/** The string standing for string leaf `k` in {@link JsonLineScanner.taggedText}. */
export function stringTag(k: number): string {
  return `\u0001${k}`;
}

function isKindOrChannel(b: Uint8Array, s: number, e: number): boolean {
  const n = e - s;
  if (n === 4) return b[s] === 0x6b && b[s + 1] === 0x69 && b[s + 2] === 0x6e && b[s + 3] === 0x64; // kind
  if (n === 7) {
    return b[s] === 0x63 && b[s + 1] === 0x68 && b[s + 2] === 0x61 && b[s + 3] === 0x6e && b[s + 4] === 0x6e
      && b[s + 5] === 0x65 && b[s + 6] === 0x6c; // channel
  }
  return false;
}

const TRUE = [0x74, 0x72, 0x75, 0x65], FALSE = [0x66, 0x61, 0x6c, 0x73, 0x65], NULL = [0x6e, 0x75, 0x6c, 0x6c];

/** Length of a `true`, `false` or `null` token at `i` (followed by a delimiter or the end), else 0. */
function literalLength(b: Uint8Array, i: number, e: number): number {
  const word = b[i] === 0x74 ? TRUE : b[i] === 0x66 ? FALSE : NULL;
  if (i + word.length > e) return 0;
  for (let k = 0; k < word.length; k++) if (b[i + k] !== word[k]) return 0;
  const stop = i + word.length;
  return stop === e || isDelimiter(b[stop]) ? word.length : 0;
}

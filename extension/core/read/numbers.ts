/**
 * Byte-level decimal parsing for the CSV hot path: bytes straight to doubles, no intermediate strings.
 *
 * Why hand-written: /work/shared/perf-notes.md measured, on the 250,000 x 45 benchmark log, 1.38 s for papaparse and
 * 1.76 s for readline + split + Number, against 1.02 s for the whole pandas peer script; turning every cell into a
 * string costs more than the peer's entire run. No npm CSV library parses numbers from bytes, so this small
 * tokenizer does, and the kept library (papaparse) handles quoted and irregular records.
 *
 * Exactness: a decimal with mantissa m < 2^53 and |power of ten| <= 22 is m * 10^e or m / 10^-e with both operands
 * exact doubles, so the one IEEE operation rounds correctly (the classic fast path). Anything else (long mantissas
 * such as 19-digit nanosecond stamps, large exponents) falls back to `Number()` on the cell's text.
 */

/** Outcome of the last {@link parseDecimal} / {@link parseNumberText} call. */
export const NUM_OK = 0;
/** Empty cell or a `nan` word: no value. */
export const NUM_MISSING = 1;
/** `inf`, `-inf`, `Infinity`...: a non-finite value. */
export const NUM_NONFINITE = 2;
/** Not a number at all. */
export const NUM_INVALID = 3;

const POW10 = [1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18,
  1e19, 1e20, 1e21, 1e22];
const TWO53 = 9007199254740992;

/** Status of the last parse (one of the NUM_* constants); a module variable so the hot path allocates nothing. */
export let numStatus = NUM_OK;
/**
 * Value of the last {@link parseDecimal}. The value goes through this array rather than the return value because a
 * double returned from a function V8 does not inline is boxed in a fresh heap number: 11 million cells meant
 * hundreds of megabytes of garbage and ~180 young-generation collections on the benchmark log.
 */
export const numValue = new Float64Array(1);
/** Byte offset where the last {@link parseDecimal} stopped (the delimiter, or `end`). */
export let numStop = 0;

function isSpace(b: number): boolean {
  return b === 0x20 || b === 0x09;
}

/**
 * Parse the cell starting at `start` and ending at the first `delim` byte or `end`. Returns the status (one of the
 * NUM_* constants, also in {@link numStatus}); the value (NaN when missing, +-Infinity when non-finite, NaN when not a
 * number) is left in `numValue[0]` and the offset of the delimiter or `end` in {@link numStop}.
 */
export function parseDecimal(b: Uint8Array, start: number, end: number, delim: number): number {
  // Lean path for the common plain cell ([-+]digits[.digits] right up to the delimiter); anything else, including
  // spaces, exponents and long mantissas, takes the general path below.
  let i = start;
  let neg = false;
  let c = i < end ? b[i] : -1;
  if (c === 0x2d) { neg = true; i++; } else if (c === 0x2b) i++;
  let m = 0;
  let digits = 0;
  while (i < end) {
    const d = (b[i] - 0x30) >>> 0;
    if (d > 9) break;
    m = m * 10 + d;
    digits++;
    i++;
  }
  let exp10 = 0;
  if (i < end && b[i] === 0x2e) {
    i++;
    const f0 = i;
    while (i < end) {
      const d = (b[i] - 0x30) >>> 0;
      if (d > 9) break;
      m = m * 10 + d;
      i++;
    }
    digits += i - f0;
    exp10 = f0 - i;
  }
  if (digits > 0 && (i === end || b[i] === delim) && m < TWO53 && exp10 >= -22) {
    numStop = i;
    numStatus = NUM_OK;
    const v = exp10 < 0 ? m / POW10[-exp10] : m;
    numValue[0] = neg ? -v : v;
    return NUM_OK;
  }
  return parseDecimalGeneral(b, start, end, delim);
}

/** The general decimal path: spaces around the number, exponents, long mantissas, words. */
function parseDecimalGeneral(b: Uint8Array, start: number, end: number, delim: number): number {
  let i = start;
  while (i < end && (b[i] === 0x20 || b[i] === 0x09) && b[i] !== delim) i++;
  const s0 = i;
  let neg = false;
  let c = i < end ? b[i] : -1;
  if (c === 0x2d || c === 0x2b) { neg = c === 0x2d; i++; }
  let m = 0;
  let digits = 0;
  let exp10 = 0;
  let exact = true;
  while (i < end) {
    c = b[i] - 0x30;
    if (c < 0 || c > 9) break;
    m = m * 10 + c;
    digits++;
    i++;
  }
  if (i < end && b[i] === 0x2e) {
    i++;
    while (i < end) {
      c = b[i] - 0x30;
      if (c < 0 || c > 9) break;
      m = m * 10 + c;
      exp10--;
      digits++;
      i++;
    }
  }
  if (m >= TWO53) exact = false;
  if (digits > 0 && i < end && (b[i] | 0x20) === 0x65) {
    let j = i + 1;
    let eneg = false;
    if (j < end && (b[j] === 0x2d || b[j] === 0x2b)) { eneg = b[j] === 0x2d; j++; }
    let e = 0;
    let ed = 0;
    while (j < end) {
      c = b[j] - 0x30;
      if (c < 0 || c > 9) break;
      if (e < 100000) e = e * 10 + c;
      ed++;
      j++;
    }
    if (ed === 0) { return slowCell(b, s0, end, delim); }
    exp10 += eneg ? -e : e;
    i = j;
  }
  // trailing spaces, then the delimiter or the end
  let k = i;
  if (k < end && b[k] !== delim) {
    while (k < end && b[k] !== delim && (b[k] === 0x20 || b[k] === 0x09)) k++;
    if (k < end && b[k] !== delim) return slowCell(b, s0, end, delim);
  }
  if (digits === 0) return slowCell(b, s0, end, delim);
  numStop = k;
  numStatus = NUM_OK;
  if (exact && exp10 >= -22 && exp10 <= 22) {
    const v = exp10 < 0 ? m / POW10[-exp10] : m * POW10[exp10];
    numValue[0] = neg ? -v : v;
    return NUM_OK;
  }
  let text = '';
  for (let p = s0; p < i; p++) text += String.fromCharCode(b[p]);
  const v = Number(text);
  numValue[0] = v;
  if (!Number.isFinite(v)) { numStatus = NUM_NONFINITE; return NUM_NONFINITE; } // overflow such as 1e309
  return NUM_OK;
}

function slowCell(b: Uint8Array, s0: number, end: number, delim: number): number {
  let k = s0;
  while (k < end && b[k] !== delim) k++;
  numStop = k;
  let e = k;
  while (e > s0 && isSpace(b[e - 1])) e--;
  numValue[0] = NaN;
  if (e === s0) { numStatus = NUM_MISSING; return numStatus; }
  if (e - s0 > 12) { numStatus = NUM_INVALID; return numStatus; }
  let text = '';
  for (let p = s0; p < e; p++) text += String.fromCharCode(b[p]);
  numValue[0] = wordValue(text);
  return numStatus;
}

/** Value of a non-decimal word: nan variants are missing, inf variants non-finite, else invalid. Sets numStatus. */
function wordValue(text: string): number {
  const w = text.toLowerCase();
  if (w === 'nan' || w === '-nan' || w === '+nan') { numStatus = NUM_MISSING; return NaN; }
  if (w === 'inf' || w === '+inf' || w === 'infinity' || w === '+infinity') { numStatus = NUM_NONFINITE; return Infinity; }
  if (w === '-inf' || w === '-infinity') { numStatus = NUM_NONFINITE; return -Infinity; }
  numStatus = NUM_INVALID;
  return NaN;
}

const DECIMAL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** Parse one cell given as text (the slow path for quoted records and JSON strings). Sets {@link numStatus}. */
export function parseNumberText(raw: string): number {
  const text = raw.trim();
  if (text === '') { numStatus = NUM_MISSING; return NaN; }
  if (DECIMAL.test(text)) {
    const v = Number(text);
    numStatus = Number.isFinite(v) ? NUM_OK : NUM_NONFINITE; // overflow such as 1e309
    return v;
  }
  return wordValue(text);
}

/**
 * Parse a JSON number token (RFC 8259 grammar: `-?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][+-]?[0-9]+)?`) starting at byte
 * `start`, for the JSON Lines hot path. Returns the offset just past the token, or -1 when the bytes there are not
 * such a token (`+1`, `.5`, `01`, `NaN`...: the caller falls back to the general JSON parser, which reports them).
 * The value, bit-identical to `Number()` of the token's text, is left in `numValue[0]`: the fast path above when
 * exact, else `Number()` of the token.
 */
export function parseJsonNumber(b: Uint8Array, start: number, end: number): number {
  let i = start;
  let neg = false;
  if (i < end && b[i] === 0x2d) { neg = true; i++; }
  if (i >= end) return -1;
  let m = 0;
  let d = (b[i] - 0x30) >>> 0;
  if (d > 9) return -1;
  if (d === 0) i++;
  else {
    while (i < end) {
      d = (b[i] - 0x30) >>> 0;
      if (d > 9) break;
      m = m * 10 + d;
      i++;
    }
  }
  let exp10 = 0;
  if (i < end && b[i] === 0x2e) {
    i++;
    const f0 = i;
    while (i < end) {
      d = (b[i] - 0x30) >>> 0;
      if (d > 9) break;
      m = m * 10 + d;
      i++;
    }
    if (i === f0) return -1;
    exp10 = f0 - i;
  }
  if (i < end && (b[i] | 0x20) === 0x65) {
    i++;
    let eneg = false;
    if (i < end && (b[i] === 0x2d || b[i] === 0x2b)) { eneg = b[i] === 0x2d; i++; }
    const e0 = i;
    let e = 0;
    while (i < end) {
      d = (b[i] - 0x30) >>> 0;
      if (d > 9) break;
      if (e < 100000) e = e * 10 + d;
      i++;
    }
    if (i === e0) return -1;
    exp10 += eneg ? -e : e;
  }
  if (m < TWO53 && exp10 >= -22 && exp10 <= 22) {
    const v = exp10 < 0 ? m / POW10[-exp10] : m * POW10[exp10];
    numValue[0] = neg ? -v : v;
    return i;
  }
  let text = '';
  for (let p = start; p < i; p++) text += String.fromCharCode(b[p]);
  numValue[0] = Number(text);
  return i;
}

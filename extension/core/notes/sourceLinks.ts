/**
 * From a log's columns to the source code that writes them, and back (pure: the host lists and reads the files).
 *
 * - `# source: path:line` metadata names the writing code directly; the path may be POSIX, relative, or Windows
 *   (`C:\src\ekf.cpp:120`, `C:/src/ekf.cpp:120:7`, `\\server\share\ekf.cpp:9`). It is honoured before any search.
 * - Otherwise a column's literal name is searched in the workspace's source text, and each hit is ranked by what
 *   the line looks like: a logging or writing call with the name as an argument (`log.row(t).set("nu_tdoa", ...)`,
 *   `row["nu_tdoa"] = ...`, `out << "nu_tdoa"`) first, then a CSV header string or list of column names, then any
 *   other string literal, then a bare identifier; mentions inside comments come last.
 * - Channel columns follow the log conventions: `nu_<ch>[_i]`, `innov_<ch>[_i]`, `s_<ch>[_i_j]`, `nis_<ch>`,
 *   `id_<ch>`, `rejected_<ch>` (case-insensitive; `_`, `.` and `-` are equivalent separators).
 *
 * Lines and columns in this file are 1-based.
 */

/** A place in a source file named by the log. */
export interface SourceRef {
  /** Path as written in the log (separators kept). */
  path: string;
  /** 1-based line, when given. */
  line?: number;
  /** 1-based column, when given. */
  column?: number;
}

/** How a line mentions a column name, best first. */
export type HitKind = 'log-call' | 'header' | 'string' | 'identifier' | 'comment';

/** Rank of each kind (higher is better). */
const KIND_SCORE: Record<HitKind, number> = { 'log-call': 4, header: 3, string: 2, identifier: 1, comment: 0 };

/** One place where a source file mentions a column's name. */
export interface SourceHit {
  /** The file, as the caller named it (a workspace-relative path or a URI string). */
  file: string;
  line: number;
  column: number;
  /** The column name found. */
  name: string;
  kind: HitKind;
  /** The line's text, trimmed and cut to 200 characters (for a pick list). */
  preview: string;
}

/**
 * Parse the value of a `# source:` metadata line. Returns undefined for an empty value or one without a file name.
 * A trailing `:line` or `:line:column` (positive integers) is split off; a drive letter's colon is kept.
 */
export function parseSourceMeta(value: string): SourceRef | undefined {
  let v = value.trim();
  if ((v.startsWith('"') && v.endsWith('"')) || (v.startsWith("'") && v.endsWith("'"))) v = v.slice(1, -1).trim();
  if (v === '') return undefined;
  const m = /^(.*?):(\d+)(?::(\d+))?$/.exec(v);
  let path = v;
  let line: number | undefined;
  let column: number | undefined;
  if (m && m[1] !== '' && !/^[A-Za-z]$/.test(m[1])) {
    path = m[1];
    line = Number(m[2]);
    column = m[3] !== undefined ? Number(m[3]) : undefined;
    if (!(line >= 1)) line = undefined;
    if (column !== undefined && !(column >= 1)) column = undefined;
  }
  path = path.trim();
  if (path === '' || /^[A-Za-z]:([\\/]?|\d+)$/.test(path)) return undefined;
  const ref: SourceRef = { path };
  if (line !== undefined) ref.line = line;
  if (column !== undefined) ref.column = column;
  return ref;
}

/** True for `C:\...`, `C:/...` and UNC `\\server\share\...` paths. */
export function isWindowsAbsolute(path: string): boolean {
  return /^[A-Za-z]:[\\/]/.test(path) || path.startsWith('\\\\');
}

/**
 * Relative forms of a source path to try in a workspace, longest first: `C:\src\filter\ekf.cpp` gives
 * `src/filter/ekf.cpp`, `filter/ekf.cpp`, `ekf.cpp`. Separators become `/`; `.` and `..` parts are dropped.
 */
export function pathSuffixes(path: string): string[] {
  const parts = path
    .replace(/^[A-Za-z]:/, '')
    .split(/[\\/]+/)
    .filter((p) => p !== '' && p !== '.' && p !== '..');
  const out: string[] = [];
  for (let i = 0; i < parts.length; i++) out.push(parts.slice(i).join('/'));
  return out;
}

/** Canonical form of a column name for comparison: lower case, `.` and `-` as `_`. */
export function canonicalColumn(name: string): string {
  return name.trim().toLowerCase().replace(/[.-]/g, '_');
}

/**
 * The channel a column belongs to, among `channels` (longest channel name first, so `gnss_vel` wins over `gnss`);
 * undefined for state, raw and unknown columns.
 */
export function channelOfColumn(column: string, channels: readonly string[]): string | undefined {
  const c = canonicalColumn(column);
  const names = [...channels].sort((a, b) => b.length - a.length);
  for (const ch of names) {
    const k = canonicalColumn(ch);
    for (const prefix of ['nu_', 'innov_', 's_', 'nis_', 'id_', 'rejected_']) {
      if (!c.startsWith(prefix + k)) continue;
      const rest = c.slice(prefix.length + k.length);
      if (rest === '' || /^(_\d+)+$/.test(rest)) return ch;
    }
  }
  return undefined;
}

/** Column names of a log from its first bytes: the CSV header (first line not starting with `#`) or JSON keys. */
export function headerColumns(head: string): string[] {
  const text = head.charCodeAt(0) === 0xfeff ? head.slice(1) : head;
  const lines = text.split(/\r?\n/);
  const first = lines.find((l) => l.trim() !== '' && !l.trimStart().startsWith('#'));
  if (first === undefined) return [];
  const trimmed = first.trim();
  if (trimmed.startsWith('{') || trimmed.startsWith('[')) {
    // JSON Lines: keys of the records seen in the head, plus `channel` values as their channel's columns.
    const names = new Set<string>();
    for (const l of lines) {
      const s = l.trim();
      if (!s.startsWith('{')) continue;
      try {
        const rec = JSON.parse(s) as unknown;
        if (typeof rec !== 'object' || rec === null || Array.isArray(rec)) continue;
        for (const k of Object.keys(rec)) names.add(k);
        const ch = (rec as Record<string, unknown>).channel;
        if (typeof ch === 'string' && ch !== '') for (const p of ['nu_', 's_', 'id_']) names.add(p + ch);
      } catch {
        // a partial last line of the head, or not JSON Lines at all
      }
    }
    return [...names];
  }
  const sep = trimmed.includes('\t') ? '\t' : trimmed.includes(';') && !trimmed.includes(',') ? ';' : ',';
  return trimmed
    .split(sep)
    .map((c) => c.trim().replace(/^"(.*)"$/, '$1').trim())
    .filter((c) => c !== '');
}

const WRITE_CALL = /\b(?:log\w*|logger|logging|write\w*|writerow\w*|writeheader|emit|record|set|put|add_?\w*|append|push\w*|insert|print\w*|fprintf|sprintf|format|row|column|field|col|add)\s*\(/i;
const HEADER_WORDS = /\b(?:header|headers|fieldnames|columns?|names|fields)\b/i;

function commentStart(line: string): number {
  // Where a line comment starts (outside strings): `//`, `#` (not `#include` / `#define`), `--`, `;` is too risky.
  let quote = '';
  for (let i = 0; i < line.length; i++) {
    const c = line[i];
    if (quote) {
      if (c === '\\') i++;
      else if (c === quote) quote = '';
      continue;
    }
    if (c === '"' || c === "'" || c === '`') quote = c;
    else if (c === '/' && line[i + 1] === '/') return i;
    else if (c === '#' && !/^#\s*(include|define|if|ifdef|ifndef|endif|else|elif|pragma|undef)\b/.test(line.slice(i))) return i;
  }
  return -1;
}

/**
 * How a line mentions `name` at character index `at` (0-based). `quoted` says whether the mention is a whole
 * string literal; `literalsOnLine` counts other quoted known names on the line (a header list has several).
 */
export function classifyMention(line: string, at: number, quoted: boolean, literalsOnLine: number): HitKind {
  const trimmed = line.trimStart();
  if (/^(\/\/|\/\*|\*|#(?!\s*(include|define))|--|%)/.test(trimmed)) return 'comment';
  const c = commentStart(line);
  if (c >= 0 && at > c) return 'comment';
  if (!quoted) return 'identifier';
  const before = line.slice(0, at);
  const after = line.slice(at);
  // A call with the literal among its arguments, a subscript written to, or a stream insertion.
  const callOpen = before.lastIndexOf('(');
  if (callOpen >= 0 && WRITE_CALL.test(before.slice(Math.max(0, callOpen - 40), callOpen + 1))) return 'log-call';
  if (/\[\s*["'`]?$/.test(before) && /^["'`][^"'`]*["'`]\s*\]\s*=(?!=)/.test(after)) return 'log-call';
  if (/<<\s*["'`]?$/.test(before)) return 'log-call';
  if (literalsOnLine >= 2 || HEADER_WORDS.test(before)) return 'header';
  if (/,/.test(after.slice(0, 80)) && /^["'`][^"'`]*,/.test(after)) return 'header';
  return 'string';
}

function escapeRegExp(s: string): string {
  return s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
}

/**
 * Every mention of the given column names in one file's text, classified. Names match whole words, case-sensitively
 * (a source file writes the exact name); a CSV header inside one string (`"t,p_x,nu_tdoa"`) counts as a header.
 */
export function findMentions(text: string, file: string, names: readonly string[]): SourceHit[] {
  const wanted = [...new Set(names.filter((n) => n.length > 0))];
  if (wanted.length === 0) return [];
  const set = new Set(wanted);
  // One alternation, longest first; word-ish boundaries so `s_tdoa` does not match inside `nus_tdoa`.
  const re = new RegExp(`(?<![A-Za-z0-9_])(${wanted.sort((a, b) => b.length - a.length).map(escapeRegExp).join('|')})(?![A-Za-z0-9_])`, 'g');
  const hits: SourceHit[] = [];
  const lines = text.split('\n');
  const isQuote = (ch: string | undefined): boolean => ch === '"' || ch === "'" || ch === '`';
  for (let li = 0; li < lines.length; li++) {
    const line = lines[li].replace(/\r$/, '');
    if (line.length > 4000) continue; // minified or generated: not a place to jump to
    re.lastIndex = 0;
    const found: { at: number; name: string; quoted: boolean; inList: boolean }[] = [];
    let m: RegExpExecArray | null;
    while ((m = re.exec(line)) !== null) {
      const name = m[1];
      if (!set.has(name)) continue;
      const at = m.index;
      const prev = line[at - 1];
      const next = line[at + name.length];
      const quoted = isQuote(prev) && next === prev;
      // Inside a delimited header string such as `"t,p_x,nu_tdoa"`.
      const inList = !quoted && insideString(line, at) && (/[,;\t]/.test(prev ?? '') || /[,;\t]/.test(next ?? ''));
      found.push({ at, name, quoted: quoted || inList, inList });
    }
    const literals = found.filter((f) => f.quoted).length;
    for (const f of found) {
      let kind = classifyMention(line, f.at - (f.quoted && !f.inList ? 1 : 0), f.quoted, f.inList ? Math.max(2, literals) : literals);
      if (f.inList && kind === 'string') kind = 'header';
      hits.push({ file, line: li + 1, column: f.at + 1, name: f.name, kind, preview: line.trim().slice(0, 200) });
    }
  }
  return hits;
}

function insideString(line: string, at: number): boolean {
  let quote = '';
  for (let i = 0; i < at; i++) {
    const c = line[i];
    if (quote) {
      if (c === '\\') i++;
      else if (c === quote) quote = '';
    } else if (c === '"' || c === "'" || c === '`') quote = c;
  }
  return quote !== '';
}

/**
 * Order hits best first: by kind (see the file comment), then hits in the file the log's `# source:` names, then
 * nearer to its line, then file and line. Stable and total, so the order never depends on the search order.
 */
export function rankHits(hits: readonly SourceHit[], source?: { file: string; line?: number }): SourceHit[] {
  const inSource = (h: SourceHit): boolean => source !== undefined && h.file === source.file;
  return [...hits].sort((a, b) => {
    const ka = KIND_SCORE[a.kind];
    const kb = KIND_SCORE[b.kind];
    if (ka !== kb) return kb - ka;
    const sa = inSource(a) ? 1 : 0;
    const sb = inSource(b) ? 1 : 0;
    if (sa !== sb) return sb - sa;
    if (sa && source?.line !== undefined) {
      const da = Math.abs(a.line - source.line);
      const db = Math.abs(b.line - source.line);
      if (da !== db) return da - db;
    }
    if (a.file !== b.file) return a.file < b.file ? -1 : 1;
    if (a.line !== b.line) return a.line - b.line;
    return a.column - b.column;
  });
}

/** Whether a hit is a place that writes the column (what a CodeLens is put above): calls, headers, literals. */
export function isWrite(hit: SourceHit): boolean {
  return hit.kind === 'log-call' || hit.kind === 'header' || hit.kind === 'string';
}

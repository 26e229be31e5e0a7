/**
 * Streaming reader of wide CSV logs (comma, semicolon or tab), fed chunk by chunk.
 *
 * Lines before the header starting with `#` are metadata (`# key: value`; `# anchor 5: 24 0 5.7` gives an anchor).
 * The numeric hot path parses cells straight from bytes (numbers.ts explains why); a record containing a `"` is
 * decoded and handed to papaparse (quoted delimiters and quoted line breaks included).
 */
import Papa from 'papaparse/papaparse.js';
import { ByteBuffer, LineSplitter } from './bytes';
import type { FileSpec, Mapping } from './mapping';
import { compilePlan, CELL_NUM, CELL_SKIP, CELL_STR, CELL_TIME, type FileRole, type RowPlan } from './plan';
import { NUM_INVALID, NUM_MISSING, NUM_NONFINITE, NUM_OK, numStatus, numStop, numValue, parseDecimal, parseNumberText } from './numbers';
import type { RunBuilder } from './builder';
import { charColumn, decodeUtf8 } from './utf8';
import { IdTextCache, normalizeId } from './ids';
import { parseWallClock } from './wallclock';
import { clip } from './diagnostics';

/** Options of one CSV file of a run. */
export interface CsvFileOptions {
  spec?: FileSpec;
  mapping?: Mapping;
  role: FileRole;
  mapName?: string;
  /** Size of the file in bytes, when known: used to reserve the columns once instead of growing them. */
  sizeHint?: number;
}

/** Data rows looked at before the column storage is reserved from the file size. */
const RESERVE_AFTER_ROWS = 256;

const QUOTE = 0x22;

/** Reads one CSV file into a run. */
export class CsvFileReader {
  private readonly splitter: LineSplitter;
  private plan: RowPlan | undefined;
  /** The row being dispatched, for {@link cellColumnOf}: its bytes (plain rows) or its cells' columns (quoted ones). */
  private rowBytes: Uint8Array | undefined;
  private rowStart = 0;
  private rowEnd = 0;
  private rowColumns: number[] | undefined;
  private delim = 0x2c;
  private delimChar = ',';
  private vals = new Float64Array(0);
  private strs: (string | undefined)[] = [];
  private skip: number;
  private readonly footerMode: number | 'non-numeric' | undefined;
  private held: { bytes: Uint8Array; line: number }[] = [];
  // quoted record spanning lines
  private rec = new ByteBuffer();
  private recLine = 0;
  private inRecord = false;
  private recQuotes = 0;
  private dataRows = 0;
  private readonly ids = new IdTextCache();
  private dataBytes = 0;

  constructor(private readonly run: RunBuilder, readonly file: string, private readonly opts: CsvFileOptions) {
    this.splitter = new LineSplitter((b, s, e, line, quote) => this.onLine(b, s, e, line, quote));
    this.skip = opts.spec?.skipRows ?? 0;
    this.footerMode = opts.spec?.skipFooter;
    if (opts.spec?.delimiter) this.setDelimiter(opts.spec.delimiter);
    run.fileIndex(file);
  }

  /** Bytes consumed so far. */
  get bytesRead(): number {
    return this.splitter.bytesRead;
  }

  private setDelimiter(d: string): void {
    this.delimChar = d;
    this.delim = d.charCodeAt(0);
  }

  /** Feed a chunk of the file. */
  push(chunk: Uint8Array): void {
    this.splitter.push(chunk);
  }

  /** End of the file. */
  finish(): void {
    this.splitter.finish();
    if (this.inRecord) {
      this.run.diagnostics.report('error', 'parse-error', this.file, this.recLine,
        'A quoted cell opened on this line is never closed; the rest of the file was read as that one record.');
      this.inRecord = false;
      this.quotedRecord(decodeUtf8(this.rec.bytes, 0, this.rec.length), this.recLine);
    }
    if (this.held.length > 0) {
      const first = this.held[0].line, last = this.held[this.held.length - 1].line;
      this.run.diagnostics.report('info', 'note', this.file, first,
        `${this.held.length} footer row(s) at lines ${first}-${last} were left out as the mapping asks (skipFooter).`);
      this.held = [];
    }
    if (!this.plan) {
      this.run.diagnostics.report('warning', 'parse-error', this.file, 0, 'The file has no header and no data rows.');
    } else if (this.plan.rowIndex === 0) {
      this.run.diagnostics.report('warning', 'parse-error', this.file, 0, 'The file has a header but no data rows.');
    }
  }

  private onLine(b: Uint8Array, s: number, e: number, line: number, hasQuote: boolean): void {
    if (this.inRecord) {
      this.rec.push(10);
      this.rec.append(b, s, e);
      this.recQuotes += countQuotes(b, s, e);
      if ((this.recQuotes & 1) === 0) {
        this.inRecord = false;
        this.quotedRecord(decodeUtf8(this.rec.bytes, 0, this.rec.length), this.recLine);
      }
      return;
    }
    if (this.skip > 0) { this.skip--; return; }
    if (hasQuote && !(this.plan === undefined && b[s] === 0x23)) {
      const q = countQuotes(b, s, e);
      if ((q & 1) === 1) {
        this.inRecord = true;
        this.recQuotes = q;
        this.recLine = line;
        this.rec.clear();
        this.rec.append(b, s, e);
        return;
      }
      this.quotedRecord(decodeUtf8(b, s, e), line);
      return;
    }
    this.plainLine(b, s, e, line);
  }

  private isBlank(b: Uint8Array, s: number, e: number): boolean {
    for (let k = s; k < e; k++) if (b[k] !== 0x20 && b[k] !== 0x09) return false;
    return true;
  }

  private plainLine(b: Uint8Array, s: number, e: number, line: number): void {
    if (this.isBlank(b, s, e)) return;
    if (b[s] === 0x23) { this.metadata(decodeUtf8(b, s + 1, e), line); return; }
    if (!this.plan) { this.firstLine(decodeUtf8(b, s, e), line, b, s, e); return; }
    if (this.footerMode !== undefined && this.footer(b, s, e, line)) return;
    this.parseRow(b, s, e, line);
  }

  /** Footer handling; returns true when the row was held back. */
  private footer(b: Uint8Array, s: number, e: number, line: number): boolean {
    const mode = this.footerMode;
    if (mode === 'non-numeric') {
      parseDecimal(b, s, e, this.delim);
      let candidate = numStatus === NUM_INVALID;
      if (candidate) candidate = Number.isNaN(parseWallClock(decodeUtf8(b, s, numStop)));
      if (candidate) { this.held.push({ bytes: b.slice(s, e), line }); return true; }
      this.releaseHeld(this.held.length);
      return false;
    }
    if (typeof mode === 'number' && mode > 0) {
      this.held.push({ bytes: b.slice(s, e), line });
      if (this.held.length > mode) this.releaseHeld(1);
      return true;
    }
    return false;
  }

  private releaseHeld(count: number): void {
    const rows = this.held.splice(0, count);
    for (const r of rows) this.parseRow(r.bytes, 0, r.bytes.length, r.line);
  }

  private metadata(text: string, line: number): void {
    const m = /^\s*([^:]+?)\s*:\s*(.*?)\s*$/.exec(text);
    if (!m) return;
    const key = m[1].toLowerCase();
    const value = m[2];
    const run = this.run;
    const anchor = /^anchor\s+(\S+)$/.exec(key);
    if (anchor) {
      const p = value.split(/[\s,;]+/).filter((x) => x !== '').map(Number);
      if (p.length === 3 && p.every(Number.isFinite)) run.addAnchor(anchor[1], [p[0], p[1], p[2]], this.file, line);
      else run.diagnostics.report('warning', 'parse-error', this.file, line,
        `Anchor metadata "${clip(text.trim())}" should give three coordinates in metres (e.g. "# anchor 5: 24 0 5.7").`);
      return;
    }
    if (key === 'reset') {
      for (const v of value.split(/[\s,;]+/)) {
        if (v === '') continue;
        const t = Number(v);
        if (Number.isFinite(t)) run.resets.push(t);
        else run.diagnostics.report('warning', 'parse-error', this.file, line, `Reset time "${clip(v)}" is not a number.`);
      }
      return;
    }
    if (!(key in run.meta) || this.opts.role === 'estimate') run.meta[key] = value;
  }

  private detectDelimiter(text: string): void {
    if (this.opts.spec?.delimiter) return;
    let inQ = false;
    let comma = 0, semi = 0, tab = 0;
    for (let k = 0; k < text.length; k++) {
      const c = text[k];
      if (c === '"') inQ = !inQ;
      else if (inQ) continue;
      else if (c === ',') comma++;
      else if (c === ';') semi++;
      else if (c === '\t') tab++;
    }
    if (semi > comma && semi >= tab) this.setDelimiter(';');
    else if (tab > comma && tab > semi) this.setDelimiter('\t');
    else this.setDelimiter(',');
  }

  private splitText(text: string): string[] {
    if (text.includes('"')) {
      const r = Papa.parse(text, { delimiter: this.delimChar, quoteChar: '"', skipEmptyLines: false });
      return r.data[0] ?? [];
    }
    return text.split(this.delimChar);
  }

  /** Header row (or, for a header-less file, the first data row). */
  private firstLine(text: string, line: number, b?: Uint8Array, s = 0, e = 0): void {
    this.detectDelimiter(text);
    const cells = this.splitText(text);
    const spec = this.opts.spec;
    let header = spec?.header;
    if (header === undefined) {
      // A first row of numbers (or a time string followed by numbers) is data, not names.
      let numeric = 0, other = 0;
      cells.forEach((c, k) => {
        const v = parseNumberText(c);
        if (numStatus === NUM_OK || (numStatus === NUM_NONFINITE && v !== 0)) numeric++;
        else if (numStatus === NUM_MISSING) { /* empty */ } else if (k === 0 && !Number.isNaN(parseWallClock(c))) numeric++;
        else other++;
      });
      header = !(numeric > 0 && other === 0);
      if (!header) {
        this.run.diagnostics.report('info', 'note', this.file, line,
          'The first row holds numbers, so the file is read as having no header; columns are named col_1, col_2, ... (a mapping file can name them).');
      }
    }
    let names: string[];
    let charColumns: number[] | undefined;
    if (header) {
      names = cells.map((c, k) => (c.trim() === '' ? `col_${k + 1}` : c.trim()));
      charColumns = [];
      let col = 1;
      for (const c of cells) { charColumns.push(col); col += c.length + 1; }
    } else {
      let n = cells.length;
      // Columns named by position in the mapping may lie beyond the first row (at most 10,000: a larger position is
      // reported by the plan as a column the file lacks).
      for (const key of Object.keys(spec?.columns ?? {})) if (/^\d+$/.test(key) && Number(key) <= 10000) n = Math.max(n, Number(key));
      names = Array.from({ length: n }, (_, k) => `col_${k + 1}`);
    }
    this.plan = compilePlan({
      names, charColumns, headerLine: header ? line : 0, spec, mapping: this.opts.mapping, role: this.opts.role,
      file: this.file, run: this.run, reportUnknown: true, mapName: this.opts.mapName,
    });
    this.plan.cellColumn = (c) => this.cellColumnOf(c);
    this.vals = new Float64Array(names.length);
    this.strs = new Array<string | undefined>(names.length);
    if (!header) {
      if (b) this.plainDataAfterHeader(b, s, e, line);
      else this.quotedRecord(text, line);
    }
  }

  private plainDataAfterHeader(b: Uint8Array, s: number, e: number, line: number): void {
    if (this.footerMode !== undefined && this.footer(b, s, e, line)) return;
    this.parseRow(b, s, e, line);
  }

  private badCell(kind: 'parse-error' | 'bad-value', line: number, column: number, c: number, text: string): void {
    const plan = this.plan as RowPlan;
    const name = plan.names[c];
    const message = kind === 'bad-value'
      ? `Column "${clip(name)}" holds the non-finite value "${clip(text)}"; it is treated as missing.`
      : `Column "${clip(name)}": "${clip(text)}" is not a number; it is treated as missing.`;
    this.run.diagnostics.report(kind === 'bad-value' ? 'warning' : 'error', kind, this.file, line, message,
      { column, key: `${this.file}:${kind}:${c}` });
  }

  /** The hot path: one unquoted data row straight from bytes. */
  private parseRow(b: Uint8Array, s: number, e: number, line: number): void {
    const plan = this.plan as RowPlan;
    const kinds = plan.cellKind;
    const scale = plan.scale;
    const offset = plan.offset;
    const vals = this.vals;
    const strs = this.strs;
    const ncols = plan.ncols;
    const delim = this.delim;
    if (ncols === 0) return;
    if (this.dataRows < RESERVE_AFTER_ROWS) this.countRow(e - s + 1);
    let p = s;
    let c = 0;
    for (;;) {
      const kind = kinds[c];
      const start = p;
      if (kind === CELL_NUM && (p === e || b[p] === delim)) {
        vals[c] = NaN; // an empty cell (a channel that did not update): what parseDecimal would say, without its general path
      } else if (kind === CELL_NUM) {
        const st = parseDecimal(b, p, e, delim);
        p = numStop;
        if (st === NUM_OK) vals[c] = numValue[0] * scale[c] + offset[c];
        else {
          vals[c] = NaN;
          if (st === NUM_NONFINITE) this.badCell('bad-value', line, charColumn(b, s, start), c, decodeUtf8(b, start, p).trim());
          else if (st === NUM_INVALID) this.badCell('parse-error', line, charColumn(b, s, start), c, decodeUtf8(b, start, p).trim());
        }
      } else {
        while (p < e && b[p] !== delim) p++;
        if (kind === CELL_STR) strs[c] = this.ids.text(b, start, p);
        else if (kind === CELL_TIME) this.timeCell(b, start, p, c, line, s);
      }
      c++;
      if (p >= e || c === ncols) break;
      p++; // the delimiter; a delimiter at the very end leaves one more (empty) cell
    }
    if (c < ncols) {
      for (let k = c; k < ncols; k++) { vals[k] = NaN; strs[k] = undefined; }
      this.ragged(line, c, ncols);
    } else if (p < e) {
      // p is at a delimiter after the last expected cell: extra cells, unless only one empty trailing cell
      let extra = 0;
      for (let k = p; k < e; k++) if (b[k] === delim) extra++;
      if (!(extra === 1 && this.isBlank(b, p + 1, e))) this.ragged(line, ncols + extra, ncols);
    }
    this.rowBytes = b;
    this.rowStart = s;
    this.rowEnd = e;
    this.rowColumns = undefined;
    plan.row(vals, strs, line);
  }

  /**
   * 1-based character column of cell `c` of the row being dispatched (found when a diagnostic needs it: a plain row
   * has no quotes, so cell c starts after the c-th delimiter).
   */
  private cellColumnOf(c: number): number | undefined {
    if (this.rowColumns) return this.rowColumns[c];
    const b = this.rowBytes;
    if (!b) return undefined;
    let p = this.rowStart;
    for (let k = 0; k < c; k++) {
      while (p < this.rowEnd && b[p] !== this.delim) p++;
      if (p >= this.rowEnd) return undefined;
      p++;
    }
    return charColumn(b, this.rowStart, p);
  }

  /** After the first rows, reserve every growing stream in proportion to the file size. */
  private countRow(bytes: number): void {
    this.dataRows++;
    this.dataBytes += bytes;
    const size = this.opts.sizeHint;
    if (this.dataRows !== RESERVE_AFTER_ROWS || !size || size <= 0) return;
    const rows = (size / (this.dataBytes / this.dataRows)) * 1.02;
    for (const b of this.run.builders()) {
      if (b.length > 0) b.reserve(b.length + ((b.length / this.dataRows) * rows));
    }
  }

  private ragged(line: number, cells: number, ncols: number): void {
    this.run.diagnostics.report('warning', 'parse-error', this.file, line,
      `This row has ${cells} cells but the header has ${ncols}; ${cells < ncols ? 'the missing cells are treated as empty' : 'the extra cells are ignored'}.`,
      { key: `${this.file}:ragged` });
  }

  /** The time cell into vals[c] (written there, not returned: a returned double would be boxed per row). */
  private timeCell(b: Uint8Array, start: number, end: number, c: number, line: number, lineStart: number): void {
    const plan = this.plan as RowPlan;
    parseDecimal(b, start, end, -1);
    if (numStatus === NUM_OK) { this.vals[c] = numValue[0] * plan.scale[c] + plan.offset[c]; return; }
    if (numStatus === NUM_MISSING) { this.vals[c] = NaN; return; }
    const text = decodeUtf8(b, start, end).trim();
    this.vals[c] = this.timeText(text, c, line, charColumn(b, lineStart, start));
  }

  private timeText(text: string, c: number, line: number, column: number): number {
    const plan = this.plan as RowPlan;
    const v = parseNumberText(text);
    if (numStatus === NUM_OK) return v * plan.scale[c] + plan.offset[c];
    if (numStatus === NUM_MISSING) return NaN;
    if (numStatus === NUM_NONFINITE) { this.badCell('bad-value', line, column, c, text); return NaN; }
    const w = parseWallClock(text, plan.timeZone);
    if (!Number.isNaN(w)) return w + plan.offset[c];
    this.badCell('parse-error', line, column, c, text);
    return NaN;
  }

  /** The slow path: a record with quotes, parsed by papaparse. */
  private quotedRecord(text: string, line: number): void {
    if (!this.plan) {
      if (text.trim() === '') return;
      this.firstLine(text, line);
      return;
    }
    if (text.trim() === '') return;
    if (this.footerMode !== undefined) {
      // Footer rows are rare and plain; a quoted row ends any footer candidates.
      this.releaseHeld(this.held.length);
    }
    const r = Papa.parse(text, { delimiter: this.delimChar, quoteChar: '"', skipEmptyLines: false });
    for (const err of r.errors.slice(0, 1)) {
      this.run.diagnostics.report('error', 'parse-error', this.file, line,
        `Quoted record could not be split cleanly: ${err.message}.`, { key: `${this.file}:quote` });
    }
    const cells: string[] = ([] as string[]).concat(...r.data);
    const plan = this.plan;
    const n = plan.ncols;
    const starts = cellStartColumns(text, this.delimChar);
    const columns: number[] = [];
    for (let c = 0; c < n; c++) {
      const cell = cells[c];
      if (cell === undefined) { this.vals[c] = NaN; this.strs[c] = undefined; continue; }
      // where the cell starts in the record as written (its quotes counted), for the diagnostics
      const column = starts[c] ?? starts[starts.length - 1];
      columns[c] = column;
      const kind = plan.cellKind[c];
      if (kind === CELL_NUM) {
        const v = parseNumberText(cell);
        if (numStatus === NUM_OK) this.vals[c] = v * plan.scale[c] + plan.offset[c];
        else {
          this.vals[c] = NaN;
          if (numStatus === NUM_NONFINITE) this.badCell('bad-value', line, column, c, cell.trim());
          else if (numStatus === NUM_INVALID) this.badCell('parse-error', line, column, c, cell.trim());
        }
      } else if (kind === CELL_STR) this.strs[c] = normalizeId(cell);
      else if (kind === CELL_TIME) this.vals[c] = this.timeText(cell.trim(), c, line, column);
      else if (kind === CELL_SKIP) { /* not used */ }
    }
    if (cells.length !== n && !(cells.length === n + 1 && cells[n].trim() === '')) this.ragged(line, cells.length, n);
    this.rowColumns = columns;
    plan.row(this.vals, this.strs, line);
  }
}

/**
 * The 1-based character columns (code points) at which the cells of a record's text start, quotes included: the
 * text split at delimiters outside quotes (a doubled quote inside a quoted cell toggles twice and stays inside).
 * Columns of a record spanning lines count on from its first line, like its line number.
 */
export function cellStartColumns(text: string, delim: string): number[] {
  const starts = [1];
  let inQuotes = false;
  let col = 1;
  for (const ch of text) {
    if (ch === '"') inQuotes = !inQuotes;
    else if (ch === delim && !inQuotes) starts.push(col + 1);
    col++;
  }
  return starts;
}

function countQuotes(b: Uint8Array, s: number, e: number): number {
  let q = 0;
  for (let k = s; k < e; k++) if (b[k] === QUOTE) q++;
  return q;
}

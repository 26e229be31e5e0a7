/**
 * A quick index of a log's text for placing notes without a full analysis: record times and lines of the state
 * epochs and of each channel's updates (with their ids), from a CSV (wide, with a header) or JSON Lines text.
 * It follows the names of the log conventions (time `t`/`time`/`timestamp`/`stamp` with an optional unit suffix;
 * channel columns `nu_<ch>`, `innov_<ch>`, `nis_<ch>`, `id_<ch>`) and is used by the editor for a log that is open
 * as text (so at most 50 MB); the analysis itself uses the real reader. Lines are 1-based.
 */
import type { AnchorLog } from './anchor';
import type { Stream } from '../model';

const TIME_UNITS: Record<string, number> = { '': 1, s: 1, ms: 1e-3, us: 1e-6, ns: 1e-9 };

function canonical(name: string): string {
  return name.trim().replace(/^"(.*)"$/, '$1').toLowerCase().replace(/[.-]/g, '_');
}

interface Growing {
  t: number[];
  line: number[];
  id: number[];
  ids: string[];
}

function grow(): Growing {
  return { t: [], line: [], id: [], ids: [] };
}

function stream(g: Growing, file: string): Stream {
  return { t_s: Float64Array.from(g.t), line: Float64Array.from(g.line), file, length: g.t.length };
}

function intern(g: Growing, id: string | undefined): number {
  if (id === undefined || id === '') return NaN;
  let k = g.ids.indexOf(id);
  if (k < 0) {
    k = g.ids.length;
    g.ids.push(id);
  }
  return k;
}

function splitCsv(line: string, sep: string): string[] {
  if (!line.includes('"')) return line.split(sep);
  const out: string[] = [];
  let cur = '';
  let q = false;
  for (let i = 0; i < line.length; i++) {
    const c = line[i];
    if (q) {
      if (c === '"' && line[i + 1] === '"') {
        cur += '"';
        i++;
      } else if (c === '"') q = false;
      else cur += c;
    } else if (c === '"') q = true;
    else if (c === sep) {
      out.push(cur);
      cur = '';
    } else cur += c;
  }
  out.push(cur);
  return out;
}

function finish(state: Growing, channels: Map<string, Growing>, file: string): AnchorLog {
  return {
    state: stream(state, file),
    channels: [...channels].map(([name, g]) => ({ ...stream(g, file), name, id: Float64Array.from(g.id), ids: g.ids })),
    files: [file],
  };
}

function indexCsv(lines: string[], file: string): AnchorLog | undefined {
  let h = 0;
  while (h < lines.length && (lines[h].trim() === '' || lines[h].trimStart().startsWith('#'))) h++;
  if (h >= lines.length) return undefined;
  const headerLine = lines[h].replace(/\r$/, '');
  const sep = headerLine.includes('\t') ? '\t' : headerLine.includes(';') && !headerLine.includes(',') ? ';' : ',';
  const names = splitCsv(headerLine, sep).map(canonical);
  let timeCol = -1;
  let scale = 1;
  names.forEach((n, i) => {
    const m = /^(?:t|time|timestamp|stamp)(?:_(s|ms|us|ns))?$/.exec(n);
    if (m && timeCol < 0) {
      timeCol = i;
      scale = TIME_UNITS[m[1] ?? ''];
    }
  });
  if (timeCol < 0) return undefined;
  const chanOf = new Map<number, string>();
  const idCol = new Map<string, number>();
  const stateCols: number[] = [];
  names.forEach((n, i) => {
    if (i === timeCol) return;
    const c = /^(?:nu|innov|nis)_(.+?)(?:_\d+)*$/.exec(n);
    if (c) chanOf.set(i, c[1]);
    else if (/^id_/.test(n)) idCol.set(n.slice(3), i);
    else if (!/^(s|rejected)_|^(gyro|acc|mag)_|^tdoa|^range/.test(n)) stateCols.push(i);
  });
  const state = grow();
  const channels = new Map<string, Growing>();
  for (const name of new Set(chanOf.values())) channels.set(name, grow());
  for (let li = h + 1; li < lines.length; li++) {
    const raw = lines[li].replace(/\r$/, '');
    if (raw.trim() === '' || raw.trimStart().startsWith('#')) continue;
    const cells = splitCsv(raw, sep);
    const t = Number(cells[timeCol]) * scale;
    if (!Number.isFinite(t) || (cells[timeCol] ?? '').trim() === '') continue;
    if (stateCols.length === 0 || stateCols.some((i) => (cells[i] ?? '').trim() !== '')) {
      state.t.push(t);
      state.line.push(li + 1);
    }
    const seen = new Set<string>();
    for (const [i, ch] of chanOf) {
      if (seen.has(ch) || (cells[i] ?? '').trim() === '') continue;
      seen.add(ch);
      const g = channels.get(ch) as Growing;
      g.t.push(t);
      g.line.push(li + 1);
      const ic = idCol.get(ch);
      g.id.push(intern(g, ic !== undefined ? cells[ic]?.trim() : undefined));
    }
  }
  return finish(state, channels, file);
}

function indexJsonLines(lines: string[], file: string): AnchorLog {
  const state = grow();
  const channels = new Map<string, Growing>();
  for (let li = 0; li < lines.length; li++) {
    const s = lines[li].trim();
    if (!s.startsWith('{')) continue;
    let rec: unknown;
    try {
      rec = JSON.parse(s);
    } catch {
      continue;
    }
    if (typeof rec !== 'object' || rec === null || Array.isArray(rec)) continue;
    const r = rec as Record<string, unknown>;
    const t = [r.t, r.time, r.timestamp, r.stamp].find((v) => typeof v === 'number' && Number.isFinite(v)) as number | undefined;
    if (t === undefined) continue;
    if (r.kind === 'update' && typeof r.channel === 'string') {
      let g = channels.get(r.channel);
      if (!g) channels.set(r.channel, (g = grow()));
      g.t.push(t);
      g.line.push(li + 1);
      g.id.push(intern(g, typeof r.id === 'string' ? r.id : typeof r.id === 'number' ? String(r.id) : undefined));
    } else if (r.kind === undefined || r.kind === 'state') {
      state.t.push(t);
      state.line.push(li + 1);
    }
  }
  return finish(state, channels, file);
}

/** Index a log's text (CSV or JSON Lines); undefined when it is neither (a JSON document, no time column). */
export function indexLogText(text: string, file: string): AnchorLog | undefined {
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  const lines = body.split('\n');
  const first = lines.find((l) => l.trim() !== '' && !l.trimStart().startsWith('#'));
  if (first === undefined) return undefined;
  const f = first.trim();
  if (f.startsWith('[')) return undefined;
  if (f.startsWith('{')) {
    // One JSON document spread over lines is not JSON Lines.
    try {
      JSON.parse(f);
    } catch {
      return undefined;
    }
    return indexJsonLines(lines, file);
  }
  return indexCsv(lines, file);
}

/** Where a note made on a log line is anchored: its time, and the channel and id when the line is one update only. */
export interface LineTarget {
  t: number;
  channel?: string;
  updateId?: string;
}

function recordAtLine(s: Stream, line: number): number {
  let lo = 0;
  let hi = s.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (s.line[mid] < line) lo = mid + 1;
    else hi = mid;
  }
  return lo < s.length && s.line[lo] === line ? lo : -1;
}

/**
 * The anchor of a note made on a 1-based line: the state epoch of that line; else the one channel update on it
 * (with its id); else undefined (a header, a comment, a blank line).
 */
export function targetAtLine(index: AnchorLog, line: number): LineTarget | undefined {
  const i = recordAtLine(index.state, line);
  if (i >= 0) return { t: index.state.t_s[i] };
  for (const c of index.channels) {
    const k = recordAtLine(c, line);
    if (k < 0) continue;
    const id = c.id[k];
    return Number.isNaN(id) ? { t: c.t_s[k], channel: c.name } : { t: c.t_s[k], channel: c.name, updateId: c.ids[id] };
  }
  return undefined;
}

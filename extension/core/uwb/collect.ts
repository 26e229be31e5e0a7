/**
 * Gathering the UWB measurements of a log into links and columns.
 *
 * Which channels are UWB (the rule, also in docs/uwb.md):
 * - A TDOA channel is a 1-dof channel with at least one update id, every present id of which has the form `i-j`
 *   (two non-empty anchor ids joined by one `-`, i != j). The update `i-j` is the difference d_j - d_i.
 * - A range channel is a 1-dof channel whose name contains `range` or `twr` (any case), is not a TDOA channel, and
 *   whose ids are anchor ids.
 * - Raw `tdoa` records (`tdoa_i tdoa_j tdoa`) and raw `range` records are UWB by definition.
 * Anchor positions come from `log.anchors` (anchors file, mapping) and from `# anchor <id>: x y z` metadata.
 *
 * A link is a TDOA pair `i-j` (a = i, b = j) or the range to one anchor (a, b = -1). Columns follow the model's
 * conventions: one Float64Array per quantity, one value per record.
 */
import type { Channel, NavLog } from '../model';
import type { Vec3_m } from './vec3';

/** Anchors known to the analysis: ids, positions where known. */
export interface AnchorTable {
  ids: string[];
  positions: (Vec3_m | undefined)[];
  index: Map<string, number>;
}

/** Links (pairs and range links) met in the log. */
export interface LinkTable {
  /** `i-j` for a pair, the anchor id for a range link. */
  keys: string[];
  a: number[];
  /** -1 for a range link. */
  b: number[];
  index: Map<string, number>;
}

/** Split an update id `i-j` into its anchor ids; undefined when it is not of that form. */
export function parsePairId(id: string): [string, string] | undefined {
  const m = /^\s*([^\s-]+)\s*-\s*([^\s-]+)\s*$/.exec(id);
  if (!m || m[1] === m[2]) return undefined;
  return [m[1], m[2]];
}

/** True when `channel` is a TDOA channel by the rule in the file comment. */
export function isTdoaChannel(channel: Channel): boolean {
  if (channel.dof !== 1) return false;
  // every interned id a pair: then so is every used one, and only whether any update names an id is left to find
  if (channel.ids.length > 0 && channel.ids.every((id) => parsePairId(id) !== undefined)) return anyUsedId(channel);
  const used = usedIds(channel);
  return used.length > 0 && used.every((id) => parsePairId(id) !== undefined);
}

/** True when `channel` is a two-way range channel by the rule in the file comment. */
export function isRangeChannel(channel: Channel): boolean {
  if (channel.dof !== 1 || !/range|twr/i.test(channel.name)) return false;
  const used = usedIds(channel);
  return used.length > 0 && used.every((id) => parsePairId(id) === undefined && id.trim() !== '');
}

/** True when some update names an interned id (stops at the first). */
function anyUsedId(channel: Channel): boolean {
  const nIds = channel.ids.length;
  for (let k = 0; k < channel.length; k++) {
    const v = channel.id[k];
    if (v >= 0 && v < nIds && v === Math.floor(v)) return true;
  }
  return false;
}

/** The interned ids the channel's updates use (in interning order; callers only test every one). */
function usedIds(channel: Channel): string[] {
  // a mark per interned id rather than a Set per update (one typed-array store per update)
  const nIds = channel.ids.length;
  const seen = new Uint8Array(nIds);
  const id = channel.id;
  for (let k = 0; k < channel.length; k++) {
    const v = id[k];
    if (v >= 0 && v < nIds && v === Math.floor(v)) seen[v] = 1;
  }
  const out: string[] = [];
  for (let v = 0; v < nIds; v++) if (seen[v]) out.push(channel.ids[v]);
  return out;
}

/** Parse "x y z" (spaces, commas or semicolons) into a point; undefined unless exactly three finite numbers. */
export function parseAnchorPosition(text: string): Vec3_m | undefined {
  const parts = text.trim().split(/[\s,;]+/).filter((s) => s !== '');
  if (parts.length !== 3) return undefined;
  const v = parts.map(Number);
  return v.every(Number.isFinite) ? [v[0], v[1], v[2]] : undefined;
}

/** The anchor table of a log: `log.anchors`, then `anchor <id>` metadata for ids not yet placed. */
export function buildAnchorTable(log: NavLog): AnchorTable {
  const table: AnchorTable = { ids: [], positions: [], index: new Map() };
  for (const a of log.anchors) {
    const k = addAnchor(table, a.id);
    if (table.positions[k] === undefined && a.p.every(Number.isFinite)) table.positions[k] = [a.p[0], a.p[1], a.p[2]];
  }
  for (const [key, value] of Object.entries(log.meta)) {
    const m = /^anchor[\s_]*([^\s:]+)$/i.exec(key.trim());
    if (!m) continue;
    const p = parseAnchorPosition(value);
    if (!p) continue;
    const k = addAnchor(table, m[1]);
    if (table.positions[k] === undefined) table.positions[k] = p;
  }
  return table;
}

/** Index of anchor `id`, adding it (without a position) when new. */
export function addAnchor(table: AnchorTable, id: string): number {
  const key = id.trim();
  let k = table.index.get(key);
  if (k === undefined) {
    k = table.ids.length;
    table.ids.push(key);
    table.positions.push(undefined);
    table.index.set(key, k);
  }
  return k;
}

/** Index of the link between anchors a and b (b = -1 for a range link), adding it when new. */
export function addLink(links: LinkTable, anchors: AnchorTable, a: number, b: number): number {
  const key = b >= 0 ? `${anchors.ids[a]}-${anchors.ids[b]}` : anchors.ids[a];
  let k = links.index.get(key);
  if (k === undefined) {
    k = links.keys.length;
    links.keys.push(key);
    links.a.push(a);
    links.b.push(b);
    links.index.set(key, k);
  }
  return k;
}

/** Filter updates of all UWB channels, columnar. */
export interface UpdateColumns {
  length: number;
  t_s: Float64Array;
  line: Float64Array;
  /** Index into `channels`. */
  channel: Uint16Array;
  link: Int32Array;
  nu: Float64Array;
  nis: Float64Array;
  rejected: Uint8Array;
  channels: { name: string; file: string; kind: 'tdoa' | 'range' }[];
}

/** Raw TDOA and range records, columnar. */
export interface RawColumns {
  length: number;
  t_s: Float64Array;
  line: Float64Array;
  /** 0 = TDOA record (value d_j - d_i), 1 = range record (value r). */
  kind: Uint8Array;
  link: Int32Array;
  value_m: Float64Array;
  files: { tdoa?: string; range?: string };
}

/**
 * Updates of the UWB channels. `nisOf` gives the NIS column of a channel (from the consistency stage or
 * consistency/nis.ts). Updates without a usable id are skipped (they cannot be attributed to anchors).
 */
export function collectUpdates(
  log: NavLog,
  anchors: AnchorTable,
  links: LinkTable,
  nisOf: (channel: Channel) => Float64Array,
): UpdateColumns {
  const chosen: { ch: Channel; kind: 'tdoa' | 'range' }[] = [];
  for (const ch of log.channels) {
    if (isTdoaChannel(ch)) chosen.push({ ch, kind: 'tdoa' });
    else if (isRangeChannel(ch)) chosen.push({ ch, kind: 'range' });
  }
  const single = chosen.length === 1 ? singleChannelUpdates(chosen[0].ch, chosen[0].kind, anchors, links, nisOf) : undefined;
  if (single) return single;
  let total = 0;
  for (const c of chosen) total += c.ch.length;
  const out: UpdateColumns = {
    length: 0,
    t_s: new Float64Array(total),
    line: new Float64Array(total),
    channel: new Uint16Array(total),
    link: new Int32Array(total),
    nu: new Float64Array(total),
    nis: new Float64Array(total),
    rejected: new Uint8Array(total),
    channels: chosen.map((c) => ({ name: c.ch.name, file: c.ch.file, kind: c.kind })),
  };
  chosen.forEach(({ ch, kind }, ci) => {
    const nis = nisOf(ch);
    const linkOfId = linksOfIds(ch, kind, anchors, links);
    for (let k = 0; k < ch.length; k++) {
      const idv = ch.id[k];
      if (!(Number.isInteger(idv) && idv >= 0 && idv < linkOfId.length) || linkOfId[idv] < 0) continue;
      const o = out.length++;
      out.t_s[o] = ch.t_s[k];
      out.line[o] = ch.line[k];
      out.channel[o] = ci;
      out.link[o] = linkOfId[idv];
      out.nu[o] = ch.nu[k];
      out.nis[o] = k < nis.length ? nis[k] : NaN;
      out.rejected[o] = ch.rejected[k] ? 1 : 0;
    }
  });
  return out;
}

/** Link index of each interned id of a channel (-1 where the id names no link). */
function linksOfIds(ch: Channel, kind: 'tdoa' | 'range', anchors: AnchorTable, links: LinkTable): number[] {
  return ch.ids.map((id) => {
    if (kind === 'tdoa') {
      const pair = parsePairId(id);
      return pair ? addLink(links, anchors, addAnchor(anchors, pair[0]), addAnchor(anchors, pair[1])) : -1;
    }
    return id.trim() === '' ? -1 : addLink(links, anchors, addAnchor(anchors, id), -1);
  });
}

/**
 * The updates of the only UWB channel as views of its own columns (no copies) when every update has a usable id,
 * one innovation component, a NIS value slot and a 0/1 rejection flag; undefined otherwise (then they are copied).
 */
function singleChannelUpdates(
  ch: Channel, kind: 'tdoa' | 'range', anchors: AnchorTable, links: LinkTable, nisOf: (channel: Channel) => Float64Array,
): UpdateColumns | undefined {
  const n = ch.length;
  if (ch.dof !== 1) return undefined;
  // (links of every interned id first: the copying path, when this one gives up, finds the same anchors and links in
  // the same order, as adding them is idempotent)
  const linkOfId = Int32Array.from(linksOfIds(ch, kind, anchors, links));
  const nis = nisOf(ch);
  if (nis.length < n) return undefined;
  const link = new Int32Array(n);
  if (!linkEachUpdate(ch.id, ch.rejected, n, linkOfId, link)) return undefined;
  return {
    length: n,
    t_s: ch.t_s.subarray(0, n),
    line: ch.line.subarray(0, n),
    channel: new Uint16Array(n),
    link,
    nu: ch.nu.subarray(0, n),
    nis: nis.subarray(0, n),
    rejected: ch.rejected.subarray(0, n),
    channels: [{ name: ch.name, file: ch.file, kind }],
  };
}

/**
 * link[k] = linkOfId[id[k]] for every update, in one pass; false as soon as an update has no integer id in range, a
 * rejection flag other than 0/1, or an id naming no link.
 */
function linkEachUpdate(id: Float64Array, rejected: Uint8Array, n: number, linkOfId: Int32Array, link: Int32Array): boolean {
  const nIds = linkOfId.length;
  for (let k = 0; k < n; k++) {
    const idv = id[k];
    const r = rejected[k];
    if (!(idv >= 0 && idv < nIds && idv === Math.floor(idv)) || (r !== 0 && r !== 1)) return false;
    const L = linkOfId[idv];
    if (L < 0) return false;
    link[k] = L;
  }
  return true;
}

/** Raw TDOA and range records (those with both anchor ids and a finite time). */
export function collectRaw(log: NavLog, anchors: AnchorTable, links: LinkTable): RawColumns {
  const nT = log.tdoa?.length ?? 0;
  const nR = log.ranges?.length ?? 0;
  const total = nT + nR;
  const out: RawColumns = {
    length: 0,
    t_s: new Float64Array(total),
    line: new Float64Array(total),
    kind: new Uint8Array(total),
    link: new Int32Array(total),
    value_m: new Float64Array(total),
    files: { ...(log.tdoa ? { tdoa: log.tdoa.file } : {}), ...(log.ranges ? { range: log.ranges.file } : {}) },
  };
  const idOf = (v: number): number => (Number.isInteger(v) && v >= 0 && v < log.anchorIds.length ? addAnchor(anchors, log.anchorIds[v]) : -1);
  if (log.tdoa) {
    const s = log.tdoa;
    for (let k = 0; k < nT; k++) {
      const i = idOf(s.i[k]);
      const j = idOf(s.j[k]);
      if (i < 0 || j < 0 || i === j || !Number.isFinite(s.t_s[k])) continue;
      const o = out.length++;
      out.t_s[o] = s.t_s[k];
      out.line[o] = s.line[k];
      out.kind[o] = 0;
      out.link[o] = addLink(links, anchors, i, j);
      out.value_m[o] = s.d_m[k];
    }
  }
  if (log.ranges) {
    const s = log.ranges;
    for (let k = 0; k < nR; k++) {
      const a = idOf(s.anchor[k]);
      if (a < 0 || !Number.isFinite(s.t_s[k])) continue;
      const o = out.length++;
      out.t_s[o] = s.t_s[k];
      out.line[o] = s.line[k];
      out.kind[o] = 1;
      out.link[o] = addLink(links, anchors, a, -1);
      out.value_m[o] = s.r_m[k];
    }
  }
  return out;
}

/** Record indices grouped by link: `order` lists them link after link, link L at [start[L], start[L + 1]). */
export interface LinkGroups {
  order: Int32Array;
  start: Int32Array;
  /** Views of `order`, one per link. */
  lists: Int32Array[];
}

/**
 * Record indices per link, each list in ascending time (stable), as views of one index column (a counting sort:
 * no per-record array growth).
 */
export function groupByLink(link: Int32Array, t_s: Float64Array, length: number, nLinks: number): LinkGroups {
  const start = new Int32Array(nLinks + 1);
  for (let k = 0; k < length; k++) {
    const L = link[k];
    if (L >= 0) start[L + 1]++;
  }
  for (let L = 0; L < nLinks; L++) start[L + 1] += start[L];
  const order = new Int32Array(start[nLinks]);
  const fill = start.slice(0, nLinks);
  // time order of each link checked while placing (last time placed per link): no second pass
  const lastT = new Float64Array(nLinks).fill(-Infinity);
  const unsorted = new Uint8Array(nLinks);
  for (let k = 0; k < length; k++) {
    const L = link[k];
    if (L < 0) continue;
    order[fill[L]++] = k;
    const t = t_s[k];
    if (t < lastT[L]) unsorted[L] = 1;
    lastT[L] = t;
  }
  const lists: Int32Array[] = [];
  for (let L = 0; L < nLinks; L++) {
    const list = order.subarray(start[L], start[L + 1]);
    if (unsorted[L]) list.sort((x, y) => t_s[x] - t_s[y] || x - y);
    lists.push(list);
  }
  return { order, start, lists };
}

/** Record indices per link, each list in ascending time (stable). */
export function indicesByLink(link: Int32Array, t_s: Float64Array, length: number, nLinks: number): Int32Array[] {
  return groupByLink(link, t_s, length, nLinks).lists;
}

/**
 * Wall-clock time strings to seconds since 1970-01-01T00:00:00Z.
 *
 * Accepted: `YYYY-MM-DD[T ]H:MM[:SS[.fff...]]` (also `/` between date parts), optionally followed by `Z` or a
 * `+HH:MM` / `-HHMM` offset. Without a zone the string is read in `zone` (default UTC): `UTC`, a fixed offset
 * `+08:00`, or an IANA name such as `Asia/Shanghai` (through `Intl`, available in Node and browsers).
 * Fractional seconds keep their full precision (they are added to the whole-second epoch, not rounded to ms).
 */

/** Offset in seconds of a fixed zone string (`Z`, `UTC`, `+08:00`, `-0500`), or undefined. */
export function fixedOffset_s(zone: string): number | undefined {
  if (/^(z|utc|gmt)$/i.test(zone)) return 0;
  const m = /^([+-])(\d{2}):?(\d{2})$/.exec(zone);
  if (!m) return undefined;
  const s = (Number(m[2]) * 60 + Number(m[3])) * 60;
  return m[1] === '-' ? -s : s;
}

const zoneCache = new Map<string, { format: Intl.DateTimeFormat } | null>();

/** Whether `zone` is usable: a fixed offset or an IANA zone name known to this runtime. */
export function isKnownZone(zone: string): boolean {
  return fixedOffset_s(zone) !== undefined || ianaFormat(zone) !== undefined;
}

function ianaFormat(zone: string): Intl.DateTimeFormat | undefined {
  let c = zoneCache.get(zone);
  if (c === undefined) {
    try {
      c = { format: new Intl.DateTimeFormat('en-US', { timeZone: zone, hourCycle: 'h23', year: 'numeric', month: 'numeric',
        day: 'numeric', hour: 'numeric', minute: 'numeric', second: 'numeric' }) };
    } catch {
      c = null;
    }
    zoneCache.set(zone, c);
  }
  return c?.format;
}

/** Offset (s) of IANA `zone` at the UTC instant `utc_ms`. */
function ianaOffset_s(format: Intl.DateTimeFormat, utc_ms: number): number {
  const parts = format.formatToParts(new Date(utc_ms));
  const get = (type: string): number => Number(parts.find((p) => p.type === type)?.value ?? 0);
  const asUtc = Date.UTC(get('year'), get('month') - 1, get('day'), get('hour') % 24, get('minute'), get('second'));
  return Math.round((asUtc - Math.floor(utc_ms / 1000) * 1000) / 1000);
}

/** Read `count` (min..max) decimal digits at `i`; returns [value, next index] or undefined. */
function digits(text: string, i: number, min: number, max: number): [number, number] | undefined {
  let v = 0;
  let k = i;
  while (k < text.length && k - i < max) {
    const c = text.charCodeAt(k) - 48;
    if (c < 0 || c > 9) break;
    v = v * 10 + c;
    k++;
  }
  return k - i >= min ? [v, k] : undefined;
}

interface WallParts { y: number; mo: number; d: number; h: number; mi: number; s: number; frac: number; zone?: string }

/** Hand-written (a regular expression here cost ~5 us per call, which mattered per row). */
function splitWallClock(text: string): WallParts | undefined {
  const n = text.length;
  let i = 0;
  while (i < n && text.charCodeAt(i) <= 32) i++;
  let r = digits(text, i, 4, 4); if (!r) return undefined;
  const y = r[0]; i = r[1];
  const sep = text[i]; if (sep !== '-' && sep !== '/') return undefined;
  r = digits(text, i + 1, 1, 2); if (!r) return undefined;
  const mo = r[0]; i = r[1];
  if (text[i] !== sep) return undefined;
  r = digits(text, i + 1, 1, 2); if (!r) return undefined;
  const d = r[0]; i = r[1];
  let h = 0, mi = 0, sec = 0, frac = 0;
  let zone: string | undefined;
  if (i < n && (text[i] === 'T' || text[i] === 't' || text[i] === ' ')) {
    let k = i + 1;
    while (k < n && text[k] === ' ') k++;
    r = digits(text, k, 1, 2);
    if (r && text[r[1]] === ':') {
      h = r[0];
      const m2 = digits(text, r[1] + 1, 2, 2); if (!m2) return undefined;
      mi = m2[0]; i = m2[1];
      if (text[i] === ':') {
        const s2 = digits(text, i + 1, 2, 2); if (!s2) return undefined;
        sec = s2[0]; i = s2[1];
        if (text[i] === '.' || text[i] === ',') {
          let k2 = i + 1;
          while (k2 < n && text.charCodeAt(k2) >= 48 && text.charCodeAt(k2) <= 57) k2++;
          if (k2 === i + 1) return undefined;
          frac = Number(`0.${text.slice(i + 1, k2)}`);
          i = k2;
        }
      }
    }
  }
  while (i < n && text[i] === ' ') i++;
  if (i < n && (text[i] === 'Z' || text[i] === 'z')) { zone = 'Z'; i++; }
  else if (i < n && (text[i] === '+' || text[i] === '-')) {
    const zh = digits(text, i + 1, 2, 2); if (!zh) return undefined;
    let k = zh[1];
    if (text[k] === ':') k++;
    const zm = digits(text, k, 2, 2); if (!zm) return undefined;
    zone = `${text[i]}${String(zh[0]).padStart(2, '0')}:${String(zm[0]).padStart(2, '0')}`;
    i = zm[1];
  }
  while (i < n && text.charCodeAt(i) <= 32) i++;
  if (i !== n) return undefined;
  if (mo < 1 || mo > 12 || d < 1 || d > 31 || h > 24 || mi > 59 || sec > 60) return undefined;
  return { y, mo, d, h, mi, s: sec, frac, zone };
}

type ZoneResolver = (wall_s: number) => number;
const resolvers = new Map<string, ZoneResolver | null>();

/** Offset function (local wall seconds -> zone offset seconds) of a zone, cached per zone string. */
function resolver(zone: string): ZoneResolver | undefined {
  let r = resolvers.get(zone);
  if (r === undefined) {
    const fixed = fixedOffset_s(zone);
    const format = fixed === undefined ? ianaFormat(zone) : undefined;
    if (fixed !== undefined) r = () => fixed;
    else if (format) {
      // Zone offsets change on whole quarter hours of local time, so one offset per 15-minute bucket of wall time
      // is exact; caching it keeps Intl (slow) out of the per-row path.
      const cache = new Map<number, number>();
      r = (wall_s: number): number => {
        const bucket = Math.floor(wall_s / 900);
        let off = cache.get(bucket);
        if (off === undefined) {
          const b_s = bucket * 900;
          off = ianaOffset_s(format, b_s * 1000);
          off = ianaOffset_s(format, (b_s - off) * 1000);
          if (cache.size > 100000) cache.clear();
          cache.set(bucket, off);
        }
        return off;
      };
    } else r = null;
    resolvers.set(zone, r);
  }
  return r ?? undefined;
}

/**
 * Seconds since the Unix epoch of a wall-clock string, or NaN when it is not one (or `zone` is unknown).
 * `zone` applies only when the string has no zone of its own.
 */
export function parseWallClock(text: string, zone = 'UTC'): number {
  const p = splitWallClock(text);
  if (!p) return NaN;
  const wall_s = Date.UTC(p.y, p.mo - 1, p.d, p.h, p.mi, p.s) / 1000;
  const r = resolver(p.zone ?? zone);
  if (!r) return NaN;
  return wall_s - r(wall_s) + p.frac;
}

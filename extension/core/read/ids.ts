/**
 * Id cells (anchor pairs, satellites, update ids) as the model's strings: integers written as numbers (`12`, `12.0`)
 * become `12`, and the strings of ids seen before are found by their bytes instead of being decoded again.
 */
import { NUM_OK, numStatus, parseNumberText } from './numbers';
import { decodeUtf8 } from './utf8';

/** Normalise an id cell: integers written as numbers (`12`, `12.0`) become `12`. */
export function normalizeId(s: string): string {
  const t = s.trim();
  if (t === '') return t;
  const v = parseNumberText(t);
  if (numStatus === NUM_OK && Number.isInteger(v) && Math.abs(v) < 1e15) return String(v);
  return t;
}

/**
 * Normalised id strings cached by their UTF-8 bytes. Ids repeat on every row, so each distinct one is decoded and
 * normalised once: a lookup hashes the bytes (FNV-1a) and compares them. At most 4096 ids are kept; ids longer than
 * 64 bytes are not cached.
 */
export class IdTextCache {
  private readonly byHash = new Map<number, { bytes: Uint8Array; text: string }>();

  /** The normalised id of `b[start..end)`. */
  text(b: Uint8Array, start: number, end: number): string {
    if (end - start > 64) return normalizeId(decodeUtf8(b, start, end));
    let h = 0x811c9dc5;
    for (let k = start; k < end; k++) h = Math.imul(h ^ b[k], 0x01000193);
    const hit = this.byHash.get(h);
    if (hit && hit.bytes.length === end - start) {
      let same = true;
      for (let k = 0; k < hit.bytes.length; k++) if (hit.bytes[k] !== b[start + k]) { same = false; break; }
      if (same) return hit.text;
    }
    const text = normalizeId(decodeUtf8(b, start, end));
    if (this.byHash.size < 4096) this.byHash.set(h, { bytes: b.slice(start, end), text });
    return text;
  }
}

/**
 * UTF-8 text from bytes, for the cold paths of the reader (header names, ids, metadata, JSON records).
 *
 * The core is compiled without DOM or Node types, so the web-standard `TextDecoder` (present in Node and browsers)
 * is reached through `globalThis` with a minimal local type instead of a library declaration.
 */

interface TextDecoderLike {
  decode(input?: Uint8Array, options?: { stream?: boolean }): string;
}
type TextDecoderCtor = new (label?: string, options?: { fatal?: boolean; ignoreBOM?: boolean }) => TextDecoderLike;

const Decoder = (globalThis as unknown as { TextDecoder: TextDecoderCtor }).TextDecoder;
const shared = new Decoder('utf-8', { ignoreBOM: true });

/** Decode bytes [start, end) as UTF-8 (invalid sequences become U+FFFD). */
export function decodeUtf8(bytes: Uint8Array, start = 0, end = bytes.length): string {
  if (end <= start) return '';
  // Short pure-ASCII slices are common (ids, numbers): build them directly.
  if (end - start <= 32) {
    let ascii = true;
    for (let i = start; i < end; i++) if (bytes[i] >= 0x80) { ascii = false; break; }
    if (ascii) {
      let s = '';
      for (let i = start; i < end; i++) s += String.fromCharCode(bytes[i]);
      return s;
    }
  }
  return shared.decode(bytes.subarray(start, end));
}

interface TextEncoderLike { encode(input: string): Uint8Array }
const Encoder = (globalThis as unknown as { TextEncoder: new () => TextEncoderLike }).TextEncoder;
const sharedEncoder = new Encoder();

/** Encode a string as UTF-8 bytes. */
export function encodeUtf8(text: string): Uint8Array {
  return sharedEncoder.encode(text);
}

/**
 * 1-based character column of byte offset `at` in a line starting at byte `lineStart` (code points, counted by
 * skipping UTF-8 continuation bytes). Used only when a diagnostic is written.
 */
export function charColumn(bytes: Uint8Array, lineStart: number, at: number): number {
  let col = 1;
  for (let i = lineStart; i < at && i < bytes.length; i++) if ((bytes[i] & 0xc0) !== 0x80) col++;
  return col;
}

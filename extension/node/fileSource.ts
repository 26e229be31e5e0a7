/**
 * Files as ByteSources for the reader (CLI and extension host): node:fs read streams in 1 MiB chunks, and
 * `openRelative` for ReadOptions.open. The file is only ever read. Problems (missing file, a folder, a FIFO or
 * device, a read error) reject the source's `chunks()` with a message naming the path; the reader turns that into
 * a diagnostic. A FIFO is refused after `fs.stat`, before any open, so reading never blocks on one.
 */
import * as fs from 'node:fs';
import * as path from 'node:path';
import type { AbortSignalLike, ByteSource } from '../core/read/index';

/** Default chunk size, bytes. */
export const CHUNK_BYTES = 1 << 20;

/** Why a path cannot be read as a log, or undefined when it can (a regular file). */
function refuse(p: string, st: fs.Stats): string | undefined {
  if (st.isDirectory()) return `${p} is a folder, not a file`;
  if (st.isFIFO()) return `${p} is a named pipe (FIFO); only regular files are read`;
  if (st.isSocket()) return `${p} is a socket; only regular files are read`;
  if (st.isCharacterDevice() || st.isBlockDevice()) return `${p} is a device; only regular files are read`;
  if (!st.isFile()) return `${p} is not a regular file`;
  return undefined;
}

function describeError(p: string, e: unknown): Error {
  const code = (e as NodeJS.ErrnoException | undefined)?.code;
  if (code === 'ENOENT') return new Error(`${p} does not exist`);
  if (code === 'EACCES' || code === 'EPERM') return new Error(`${p} cannot be read (permission denied)`);
  if (code === 'EISDIR') return new Error(`${p} is a folder, not a file`);
  return new Error(`${p} could not be read: ${e instanceof Error ? e.message : String(e)}`);
}

/**
 * A ByteSource over a file, read with a node:fs stream from byte `start` (default 0; used to resume a growing file
 * from `LogReader.bytesRead`) in chunks of `highWaterMark` bytes (default 1 MiB).
 */
export function fileByteSource(filePath: string, opts: { start?: number; highWaterMark?: number } = {}): ByteSource {
  let size: number | undefined;
  try {
    const st = fs.statSync(filePath);
    if (st.isFile()) size = Math.max(0, st.size - (opts.start ?? 0));
  } catch {
    size = undefined;
  }
  const source: ByteSource = {
    name: filePath,
    async *chunks(signal?: AbortSignalLike): AsyncIterable<Uint8Array> {
      let st: fs.Stats;
      try {
        st = await fs.promises.stat(filePath);
      } catch (e) {
        throw describeError(filePath, e);
      }
      const why = refuse(filePath, st);
      if (why) throw new Error(why);
      const stream = fs.createReadStream(filePath, { start: opts.start ?? 0, highWaterMark: opts.highWaterMark ?? CHUNK_BYTES });
      try {
        for await (const chunk of stream) {
          if (signal?.aborted) break;
          const b = chunk as Buffer;
          yield new Uint8Array(b.buffer, b.byteOffset, b.byteLength);
        }
      } catch (e) {
        throw describeError(filePath, e);
      } finally {
        stream.destroy();
      }
    },
  };
  if (size !== undefined) source.size = size;
  return source;
}

/**
 * For ReadOptions.open: the file `relPath` relative to the folder of the file `relativeTo` (an absolute `relPath` is
 * used as is). Undefined when nothing exists at that path; anything else that exists gets a ByteSource, whose
 * `chunks()` rejects with a clear message when it is not a readable regular file.
 */
export function openRelative(relPath: string, relativeTo: string): ByteSource | undefined {
  const full = path.isAbsolute(relPath) ? relPath : path.join(path.dirname(relativeTo), relPath);
  try {
    fs.statSync(full);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT' || (e as NodeJS.ErrnoException).code === 'ENOTDIR') return undefined;
  }
  return fileByteSource(full);
}

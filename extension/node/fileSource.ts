/**
 * Files as ByteSources for the reader (CLI and extension host): positioned reads in 1 MiB chunks, and
 * `openRelative` for ReadOptions.open. The file is only ever read. Problems (missing file, a folder, a FIFO or
 * device, a read error) reject the source's `chunks()` with a message naming the path; the reader turns that into
 * a diagnostic. A FIFO is refused after `fs.stat`, before any open, so reading never blocks on one.
 */
import * as fs from 'node:fs';
import * as path from 'node:path';
import type { AbortSignalLike, ByteSource } from '../core/read/index';

/** Default chunk size, bytes. */
export const CHUNK_BYTES = 1 << 20;
/**
 * Chunk size of a source that reuses its buffer. 4 MiB measured no faster than 1 MiB beyond the noise of this shared
 * machine (1.20 s against 1.24 s CPU for the benchmark read), so the smaller buffer is kept: the peak memory of a run
 * is the tighter target (issue 10).
 */
export const REUSED_CHUNK_BYTES = 1 << 20;

/** Chunks read between two checks that the file was not truncated, replaced or deleted (and always at the end). */
const CHECK_EVERY_CHUNKS = 8;
/**
 * How long a look that suggests a rewrite in place waits before it looks again, ms. Writing to a file moves its
 * times before its size (in Linux's generic write path the times are updated before the bytes are copied and the size
 * after each page; from memory of the kernel source), so a look in between sees an append in progress as times moved
 * without growth; the second look sees it grown. A write still not done after this long is taken for a rewrite (the
 * file is read again: only time lost).
 */
export const REWRITE_SETTLE_MS = 20;

/** Why a path cannot be read as a log, or undefined when it can (a regular file). */
function refuse(p: string, st: FileStatLike): string | undefined {
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

/** The part of `fs.Stats` the byte source looks at. */
export interface FileStatLike {
  size: number;
  ino: number;
  dev: number;
  mtimeMs: number;
  ctimeMs: number;
  isFile(): boolean;
  isDirectory(): boolean;
  isFIFO(): boolean;
  isSocket(): boolean;
  isCharacterDevice(): boolean;
  isBlockDevice(): boolean;
}

/** An open file as the byte source uses it (a subset of `fs.promises.FileHandle`). */
export interface FileHandleLike {
  read(buffer: Uint8Array, offset: number, length: number, position: number): Promise<{ bytesRead: number }>;
  stat(): Promise<FileStatLike>;
  close(): Promise<void>;
}

/**
 * The file operations of {@link fileByteSource}: node:fs by default ({@link NODE_FILES}). Tests inject faults through
 * it (a read error, a file that vanishes or is truncated mid-read), since permissions do not stop root.
 */
export interface FileLayer {
  stat(p: string): Promise<FileStatLike>;
  statSync(p: string): FileStatLike;
  open(p: string): Promise<FileHandleLike>;
}

/** The real file layer (node:fs). */
export const NODE_FILES: FileLayer = {
  stat: (p) => fs.promises.stat(p),
  statSync: (p) => fs.statSync(p),
  open: (p) => fs.promises.open(p, 'r'),
};

/** How a file changed under the reader. */
export type FileChange = 'truncated' | 'replaced' | 'deleted' | 'rewritten';

/**
 * The file changed under the reader (truncated, replaced, deleted or rewritten in place): the caller may read it again
 * from the start.
 */
export class FileChangedError extends Error {
  constructor(message: string, readonly how: FileChange) {
    super(message);
    this.name = 'FileChangedError';
  }
}

/** The times and size of one file (from fstat, or a stat of the path while it names the same inode). */
export interface FileStamp {
  size: number;
  mtimeMs: number;
  ctimeMs: number;
}

/** The stamp of a stat (fstat of a descriptor, or a stat of the path). */
export function stampOf(st: FileStamp): FileStamp {
  return { size: st.size, mtimeMs: st.mtimeMs, ctimeMs: st.ctimeMs };
}

/**
 * Whether a file seen as `before` and later as `after` (the same inode) was written without growing: its modification
 * or status-change time moved while its size did not grow. That is how a rewrite in place is told (same inode, same
 * length or shorter, other bytes). Growth is not a change: appending moves the times as well, and a log that is only
 * appended to while it is read is simply read further (as it always was), so a file that grew between two looks is
 * taken for appended to. The limits of a check by stat: a rewrite that also grows the file between two looks is not
 * seen, nor one that lands within the file system's time granularity of the write before it; a touch moves the times
 * too, and the change time moves on a chmod, chown or new hard link, which then read the file again (only time
 * lost). The change time is looked at because the modification time can be set back (touch -d, a copy that keeps
 * times); the change time cannot.
 */
export function rewrittenSince(before: FileStamp, after: FileStamp): boolean {
  return after.size <= before.size && (after.mtimeMs !== before.mtimeMs || after.ctimeMs !== before.ctimeMs);
}

/** The message of a {@link FileChangedError} `rewritten`. */
export function rewrittenMessage(filePath: string): string {
  return `${filePath} was rewritten in place while it was being read (its times moved, its size did not grow)`;
}

const delay = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

/**
 * After a look found `filePath` (seen before as `before`) written without growing ({@link rewrittenSince}): whether a
 * second look, {@link REWRITE_SETTLE_MS} later, finds the same file grown past `before` (an append that was in
 * progress), in which case its stat; undefined: a rewrite. Through `files` (default node:fs).
 */
export async function appendSettled(filePath: string, before: FileStamp & { ino: number; dev: number }, files: FileLayer = NODE_FILES): Promise<FileStatLike | undefined> {
  await delay(REWRITE_SETTLE_MS);
  const again = await files.stat(filePath).catch(() => undefined);
  return again && again.ino === before.ino && again.dev === before.dev && again.size > before.size ? again : undefined;
}

/**
 * A ByteSource over a file, read from byte `start` (default 0; used to resume a growing file from
 * `LogReader.bytesRead`) in chunks of `highWaterMark` bytes (default 1 MiB), through `files`
 * (default node:fs). With `reuse`, two buffers are read into in turn (the next chunk is read while this one is
 * parsed): a chunk is valid only until the next one is asked for. That is what the reader (readRun, LogReader.push) needs, since it copies whatever it keeps of a chunk,
 * and it saves faulting in a fresh megabyte per chunk: on the 92 MB benchmark log fresh buffers cost about 0.4 s of CPU,
 * more than the newline count itself (measured on this machine, see issue 10). Without `reuse` every chunk is its own
 * buffer (for callers that keep chunks).
 * Every few chunks and at the end, the path is looked up again: when the file was truncated below the bytes read,
 * replaced by another file (a different inode) or deleted, `chunks()` rejects with a {@link FileChangedError}
 * (`analyzeFile` then reads it again once). A file that grows while it is read is simply read further.
 * With `rewrites`, a rewrite in place is a change too: times moved without growth since the last look
 * ({@link rewrittenSince}), confirmed by a second look ({@link appendSettled}); the first look is the fstat at open.
 * (Off by default: the tail of a live log resumes at `start` on a file that is being appended to, so it tells a
 * rewrite by the bytes it read instead (tail.ts); the other files of a run keep the checks they had.)
 * `onOpen` gets the opened file's stat (its device and inode identify the file that was read); `onEnd` the stat of the
 * last look, once the whole file was read without a change (the state the bytes read are of).
 */
export function fileByteSource(filePath: string,
  opts: {
    start?: number; highWaterMark?: number; files?: FileLayer; reuse?: boolean; rewrites?: boolean;
    onOpen?: (opened: FileStatLike) => void; onEnd?: (last: FileStatLike) => void;
  } = {}): ByteSource {
  const files = opts.files ?? NODE_FILES;
  const hwm = opts.highWaterMark ?? (opts.reuse ? REUSED_CHUNK_BYTES : CHUNK_BYTES);
  let size: number | undefined;
  try {
    const st = files.statSync(filePath);
    if (st.isFile()) size = Math.max(0, st.size - (opts.start ?? 0));
  } catch {
    size = undefined;
  }
  const source: ByteSource = {
    name: filePath,
    async *chunks(signal?: AbortSignalLike): AsyncIterable<Uint8Array> {
      let st: FileStatLike;
      try {
        st = await files.stat(filePath);
      } catch (e) {
        throw describeError(filePath, e);
      }
      const why = refuse(filePath, st);
      if (why) throw new Error(why);
      let handle: FileHandleLike;
      try {
        handle = await files.open(filePath);
      } catch (e) {
        throw describeError(filePath, e);
      }
      let pending: Promise<number> | undefined;
      try {
        let opened: FileStatLike;
        try {
          opened = await handle.stat();
        } catch (e) {
          throw describeError(filePath, e);
        }
        opts.onOpen?.(opened);
        let pos = opts.start ?? 0;
        // The file as last looked at: a rewrite in place is told against it. A stat of the path that names the opened
        // inode (checked first) gives that inode's times and size, as an fstat of the descriptor would.
        let last: FileStatLike = opened;
        const changed = async (): Promise<FileChangedError | undefined> => {
          let now: FileStatLike;
          try {
            now = await files.stat(filePath);
          } catch (e) {
            const code = (e as NodeJS.ErrnoException | undefined)?.code;
            if (code === 'ENOENT' || code === 'ENOTDIR') return new FileChangedError(`${filePath} was deleted while it was being read`, 'deleted');
            throw describeError(filePath, e);
          }
          if (now.ino !== opened.ino || now.dev !== opened.dev) {
            return new FileChangedError(`${filePath} was replaced by another file while it was being read`, 'replaced');
          }
          if (now.size < pos) {
            return new FileChangedError(`${filePath} was truncated while it was being read (it shrank to ${now.size} bytes after ${pos} had been read)`, 'truncated');
          }
          if (opts.rewrites && rewrittenSince(last, now)) {
            const grown = await appendSettled(filePath, last, files);
            if (!grown || grown.size < pos) return new FileChangedError(rewrittenMessage(filePath), 'rewritten');
            now = grown;
          }
          last = now;
          return undefined;
        };
        // Double buffering: the next chunk is read (on libuv's thread pool) while the consumer parses this one, and
        // the check for a changed file runs beside it, so the parsing thread does not wait for the disk between
        // chunks. With `reuse` the two buffers alternate: a chunk stays valid until the next one is asked for.
        const pair = opts.reuse ? [new Uint8Array(hwm), new Uint8Array(hwm)] : undefined;
        let which = 0;
        let chunksRead = 0;
        const nextBuffer = (): Uint8Array => (pair ? pair[(which ^= 1)] : new Uint8Array(hwm));
        // A prefetched read or check may fail while the consumer still parses: it is marked handled at once (its
        // error is thrown where it is awaited), so it is never an unhandled rejection.
        const handled = <T>(p: Promise<T>): Promise<T> => {
          p.catch(() => undefined);
          return p;
        };
        const readAt = (buf: Uint8Array, at: number): Promise<number> =>
          handled(handle.read(buf, 0, hwm, at).then((r) => r.bytesRead, (e: unknown) => { throw describeError(filePath, e); }));
        let buf = nextBuffer();
        pending = readAt(buf, pos);
        for (;;) {
          if (signal?.aborted) return;
          const n = await pending;
          if (n === 0) break;
          pos += n;
          const following = nextBuffer();
          pending = readAt(following, pos);
          // The change check (a stat) runs every CHECK_EVERY_CHUNKS chunks and once more at the end: a stat per
          // chunk cost ~0.2-0.4 ms of this thread each (the promise and Stats object), ~20-40 ms per 100 MB.
          const check = ++chunksRead % CHECK_EVERY_CHUNKS === 0 ? handled(changed()) : undefined;
          yield n === hwm ? buf : buf.subarray(0, n);
          buf = following;
          const c = check ? await check : undefined;
          if (c) throw c;
        }
        const c = await changed();
        if (c) throw c;
        opts.onEnd?.(last);
      } finally {
        // A read still in flight (the consumer stopped early, or a change was found) settles before the close.
        await pending?.catch(() => undefined);
        await handle.close().catch(() => undefined);
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

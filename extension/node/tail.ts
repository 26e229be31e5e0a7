/**
 * Tailing a growing log (CLI and extension host): each {@link FileTail.poll} reads the bytes appended since the last
 * one into the same LogReader. When the file was truncated below what was read, replaced by another file (another
 * inode, e.g. a logger that renames a new file over the old one), or rewritten in place (the same inode and at least
 * as long, but its first or its last bytes read are no longer what was read: an estimator run again on the same path,
 * opened without truncation or grown past the old length between two polls, or a header patched at the end of a
 * run), the tail notices, reads the file again from the start and adds a note saying so. Without that check the
 * next poll would go on reading the new file from the old offset, joining two runs (often mid-line). The file is only
 * ever read.
 *
 * Why the first and last bytes and not a hash of all: each poll then costs two reads of at most
 * {@link WITNESS_BYTES}, whatever the log's length; a rewrite that leaves both windows byte for byte as they were
 * (e.g. the same deterministic run written again) changes nothing that was read around them, in practice.
 */
import type { NavLog } from '../core/model';
import { LogReader, type LogReaderOptions } from '../core/read/index';
import { FileChangedError, NODE_FILES, fileByteSource, type FileLayer, type FileStatLike } from './fileSource';

/** What one poll found. */
export interface TailResult {
  /** The run so far (a snapshot: take a new one after the next poll). */
  log: NavLog;
  /** Set when the file was read again from the start during this poll, and why. */
  restarted?: TailRestart;
}

/** Why a tail read its file again from the start. */
export type TailRestart = 'truncated' | 'replaced' | 'rewritten';

/** Bytes kept from the start of the file, and from just before the read offset, to tell a rewrite in place. */
export const WITNESS_BYTES = 4096;

/** Options of a {@link FileTail}: those of its LogReader, plus the file layer and two hooks. */
export interface FileTailOptions extends LogReaderOptions {
  /** File layer (node:fs by default; tests inject faults). */
  files?: FileLayer;
  /** Called with every new LogReader (the first, and each after a restart), before any byte is pushed. */
  prepare?: (reader: LogReader) => void;
  /** Called with every chunk pushed and the byte offset it starts at (0: the first chunk of a new reader). */
  onChunk?: (chunk: Uint8Array, start: number) => void;
}

/** A growing log followed by repeated {@link poll} calls. */
export class FileTail {
  private reader: LogReader;
  private identity: { ino: number; dev: number } | undefined;
  private readonly files: FileLayer;
  /** The file's first bytes as read (up to WITNESS_BYTES). */
  private head: Uint8Array = new Uint8Array(0);
  /** The last bytes read, up to WITNESS_BYTES, ending at the reader's offset. */
  private edge: Uint8Array = new Uint8Array(0);

  /** Follow `filePath`; `options` as for a LogReader, plus the file layer and hooks ({@link FileTailOptions}). */
  constructor(readonly filePath: string, private readonly options: FileTailOptions = {}) {
    this.files = options.files ?? NODE_FILES;
    this.reader = this.newReader();
  }

  private newReader(): LogReader {
    const reader = new LogReader(this.filePath, this.options);
    this.options.prepare?.(reader);
    return reader;
  }

  /** Bytes of the file read so far. */
  get bytesRead(): number {
    return this.reader.bytesRead;
  }

  /**
   * Read what was appended since the last poll. Rejects (with a plain message naming the path) when the file cannot
   * be read at all, e.g. it was deleted; a truncated, replaced or rewritten file is read again from the start.
   */
  async poll(): Promise<TailResult> {
    let restarted: TailResult['restarted'];
    for (let attempt = 0; ; attempt++) {
      const st = await this.files.stat(this.filePath).catch((e: unknown) => {
        throw new Error(`${this.filePath} cannot be read: ${e instanceof Error ? e.message.split('\n')[0] : String(e)}`);
      });
      const why = this.change(st) ?? (await this.rewritten());
      if (why) {
        restarted = why;
        this.restart(why, st.size);
      }
      this.identity = { ino: st.ino, dev: st.dev };
      try {
        for await (const chunk of fileByteSource(this.filePath, { start: this.reader.bytesRead, files: this.files, reuse: true }).chunks()) {
          this.options.onChunk?.(chunk, this.reader.bytesRead);
          this.witness(chunk);
          this.reader.push(chunk);
        }
        return restarted ? { log: this.reader.snapshot(), restarted } : { log: this.reader.snapshot() };
      } catch (e) {
        if (!(e instanceof FileChangedError) || e.how === 'deleted' || attempt >= 1) throw e;
        // Changed during this read: the next round sees it by inode or size and starts again.
      }
    }
  }

  private change(st: FileStatLike): 'truncated' | 'replaced' | undefined {
    if (this.identity && (st.ino !== this.identity.ino || st.dev !== this.identity.dev)) return 'replaced';
    if (st.size < this.reader.bytesRead) return 'truncated';
    return undefined;
  }

  /** Keep the witness bytes of a chunk about to be pushed (it starts at the reader's offset). */
  private witness(chunk: Uint8Array): void {
    if (chunk.length === 0) return;
    if (this.head.length < WITNESS_BYTES && this.reader.bytesRead === this.head.length) {
      this.head = Buffer.concat([this.head, chunk.subarray(0, WITNESS_BYTES - this.head.length)]);
    }
    // The chunk's buffer is reused by the byte source: head and edge are always copies (Buffer.from, Buffer.concat).
    this.edge = chunk.length >= WITNESS_BYTES
      ? Buffer.from(chunk.subarray(chunk.length - WITNESS_BYTES))
      : Buffer.concat([this.edge.subarray(Math.max(0, this.edge.length + chunk.length - WITNESS_BYTES)), chunk]);
  }

  /**
   * 'rewritten' when the file's first bytes or its bytes just before the read offset differ from those read (see the
   * file comment); undefined when they match or nothing was read yet. A file that cannot be read here is left to the
   * read that follows, which reports it.
   */
  private async rewritten(): Promise<'rewritten' | undefined> {
    const end = this.reader.bytesRead;
    if (end === 0) return undefined;
    let handle;
    try {
      handle = await this.files.open(this.filePath);
    } catch {
      return undefined;
    }
    try {
      const same = async (expected: Uint8Array, at: number): Promise<boolean> => {
        const got = Buffer.alloc(expected.length);
        let n = 0;
        while (n < got.length) {
          const { bytesRead } = await handle.read(got, n, got.length - n, at + n);
          if (bytesRead === 0) return false; // shorter than what was read: the stat before was of another moment
          n += bytesRead;
        }
        return got.equals(expected);
      };
      return (await same(this.head, 0)) && (await same(this.edge, end - this.edge.length)) ? undefined : 'rewritten';
    } catch {
      return undefined;
    } finally {
      await handle.close().catch(() => undefined);
    }
  }

  private restart(why: TailRestart, size: number): void {
    const before = this.reader.bytesRead;
    this.reader = this.newReader();
    this.head = new Uint8Array(0);
    this.edge = new Uint8Array(0);
    const what = why === 'replaced'
      ? `${this.filePath} was replaced by another file while it was being followed`
      : why === 'rewritten'
        ? `${this.filePath} was rewritten in place while it was being followed (its first or last bytes read changed; ${size} bytes now, ${before} had been read)`
        : `${this.filePath} was truncated while it was being followed (it shrank to ${size} bytes after ${before} had been read)`;
    this.reader.addDiagnostics([{ severity: 'warning', kind: 'note', file: this.filePath, line: 0,
      message: `${what}; it was read again from the start.` }]);
  }
}

/**
 * Tailing a growing log (CLI and extension host): each {@link FileTail.poll} reads the bytes appended since the last
 * one into the same LogReader. When the file was truncated below what was read, or replaced by another file (another
 * inode, e.g. a logger that renames a new file over the old one), the tail notices, reads the file again from the
 * start and adds a note saying so. The file is only ever read.
 */
import type { NavLog } from '../core/model';
import { LogReader, type LogReaderOptions } from '../core/read/index';
import { FileChangedError, NODE_FILES, fileByteSource, type FileLayer, type FileStatLike } from './fileSource';

/** What one poll found. */
export interface TailResult {
  /** The run so far (a snapshot: take a new one after the next poll). */
  log: NavLog;
  /** Set when the file was read again from the start during this poll, and why. */
  restarted?: 'truncated' | 'replaced';
}

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
   * be read at all, e.g. it was deleted; a truncated or replaced file is read again from the start.
   */
  async poll(): Promise<TailResult> {
    let restarted: TailResult['restarted'];
    for (let attempt = 0; ; attempt++) {
      const st = await this.files.stat(this.filePath).catch((e: unknown) => {
        throw new Error(`${this.filePath} cannot be read: ${e instanceof Error ? e.message.split('\n')[0] : String(e)}`);
      });
      const why = this.change(st);
      if (why) {
        restarted = why;
        this.restart(why, st.size);
      }
      this.identity = { ino: st.ino, dev: st.dev };
      try {
        for await (const chunk of fileByteSource(this.filePath, { start: this.reader.bytesRead, files: this.files, reuse: true }).chunks()) {
          this.options.onChunk?.(chunk, this.reader.bytesRead);
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

  private restart(why: 'truncated' | 'replaced', size: number): void {
    const before = this.reader.bytesRead;
    this.reader = this.newReader();
    const what = why === 'replaced'
      ? `${this.filePath} was replaced by another file while it was being followed`
      : `${this.filePath} was truncated while it was being followed (it shrank to ${size} bytes after ${before} had been read)`;
    this.reader.addDiagnostics([{ severity: 'warning', kind: 'note', file: this.filePath, line: 0,
      message: `${what}; it was read again from the start.` }]);
  }
}

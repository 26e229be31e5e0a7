/**
 * SHA-256 of the first N bytes of a file, hashed by a second thread while the main thread parses the same file
 * (the command line's parallel analysis, parallelAnalysis.ts), and the handshake that keeps the two in step.
 *
 * Why the hash is "of the bytes that were analysed": the main thread publishes, after every chunk it parsed, how many
 * bytes it has read so far ({@link HashProgress}); the hashing thread never hashes past that count, and at the end it
 * hashes exactly the main thread's total (a file that grew after the main thread's last read is not hashed further).
 * It reads the file through its own descriptor, so it also checks that it read the SAME file: its descriptor's
 * device and inode must be those the main thread opened, and the file must still hold the bytes (a short read means
 * it was truncated). Either failure is a {@link HashAnswer} `changed`, which analyzeFile treats like a change the
 * main thread saw itself: the log is read again from the start. A rewrite in place (same inode, other bytes, no
 * growth) after the main thread's last look but before the hash was done is told by the answer's `stamp` (the fstat
 * of the hasher's descriptor once it hashed the last byte), which analyzeFile compares with the main thread's last
 * look (fileSource.ts, rewrittenSince).
 */
import { closeSync, fstatSync, openSync, readSync } from 'node:fs';
import { createHash, type Hash } from 'node:crypto';
import { stampOf, type FileChange, type FileStamp } from './fileSource';

/** Bytes read per `readSync` while hashing (the main thread's chunk size: the hasher trails it by one chunk). */
const HASH_CHUNK_BYTES = 1 << 20;

/** Index of the state word in the control's Int32Array: RUNNING, FINAL or ABANDONED. */
const STATE = 0;
/** Index of the sequence word (bumped on every publication; the hasher waits on it). */
const SEQ = 1;
const RUNNING = 0;
const FINAL = 1;
const ABANDONED = 2;
/** How long the hasher sleeps at most before it looks at the control again, ms (a lost wake-up costs no more). */
const WAIT_MS = 250;

/** Identity of an open file (from fstat). */
export interface FileIdentity {
  dev: number;
  ino: number;
}

/** What the hashing thread answers. */
export type HashAnswer =
  | { kind: 'hash'; sha256: string; bytes: number; identity: FileIdentity; stamp: FileStamp; ms: number }
  | { kind: 'changed'; how: FileChange; message: string }
  | { kind: 'abandoned' }
  | { kind: 'failed'; message: string };

/**
 * The main thread's side of the handshake over one SharedArrayBuffer (posted to the hashing thread at its start):
 * {@link publish} after every chunk, then {@link finish} with the total, or {@link abandon}.
 */
export class HashProgress {
  readonly buffer = new SharedArrayBuffer(16);
  private readonly words = new Int32Array(this.buffer, 0, 2);
  private readonly limit = new BigInt64Array(this.buffer, 8, 1);

  /** The main thread has read `bytes` bytes of the file (from its start). */
  publish(bytes: number): void {
    Atomics.store(this.limit, 0, BigInt(bytes));
    Atomics.add(this.words, SEQ, 1);
    Atomics.notify(this.words, SEQ);
  }

  /** The main thread read `bytes` bytes in all: hash exactly those and answer. */
  finish(bytes: number): void {
    Atomics.store(this.limit, 0, BigInt(bytes));
    Atomics.store(this.words, STATE, FINAL);
    Atomics.add(this.words, SEQ, 1);
    Atomics.notify(this.words, SEQ);
  }

  /** Stop hashing (the read failed or is being done again). */
  abandon(): void {
    Atomics.store(this.words, STATE, ABANDONED);
    Atomics.add(this.words, SEQ, 1);
    Atomics.notify(this.words, SEQ);
  }
}

/** Hash of a file's first bytes, read from one descriptor (node:fs, synchronous: the caller is a worker thread). */
export class PrefixHasher {
  private readonly fd: number;
  private readonly hash: Hash = createHash('sha256');
  private readonly buf = Buffer.allocUnsafe(HASH_CHUNK_BYTES);
  /** Bytes hashed so far. */
  hashed = 0;
  /** Device and inode of the descriptor. */
  readonly identity: FileIdentity;

  /** Open `filePath`; throws (ENOENT...) when it cannot be opened. */
  constructor(readonly filePath: string) {
    this.fd = openSync(filePath, 'r');
    const st = fstatSync(this.fd);
    this.identity = { dev: st.dev, ino: st.ino };
  }

  /** Hash on up to byte `limit`; false when the file ends before it (it was truncated). */
  advance(limit: number): boolean {
    while (this.hashed < limit) {
      const want = Math.min(HASH_CHUNK_BYTES, limit - this.hashed);
      const n = readSync(this.fd, this.buf, 0, want, this.hashed);
      if (n <= 0) return false;
      this.hash.update(n === this.buf.length ? this.buf : this.buf.subarray(0, n));
      this.hashed += n;
    }
    return true;
  }

  /** The times and size of the open file now (fstat of the descriptor). */
  stamp(): FileStamp {
    return stampOf(fstatSync(this.fd));
  }

  /** Hex digest (once). */
  digest(): string {
    return this.hash.digest('hex');
  }

  /** Close the descriptor. */
  close(): void {
    try { closeSync(this.fd); } catch { /* already closed */ }
  }
}

function changedAnswer(filePath: string, how: 'truncated' | 'replaced' | 'deleted', bytes: number): HashAnswer {
  const message = how === 'truncated' ? `${filePath} was truncated while it was being read (it ended before the ${bytes} bytes that had been read)`
    : how === 'replaced' ? `${filePath} was replaced by another file while it was being read`
      : `${filePath} was deleted while it was being read`;
  return { kind: 'changed', how, message };
}

/**
 * The hashing thread's loop: hash `filePath` as far as the main thread has read it (the control posted from
 * {@link HashProgress}), sleeping on the control between publications, until the main thread finishes or abandons.
 * Blocks its thread (Atomics.wait): run it only where nothing else must run meanwhile (a worker thread).
 */
export function hashWhileRead(filePath: string, control: SharedArrayBuffer): HashAnswer {
  const t0 = performance.now();
  const words = new Int32Array(control, 0, 2);
  const limit = new BigInt64Array(control, 8, 1);
  let hasher: PrefixHasher;
  try {
    hasher = new PrefixHasher(filePath);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ENOENT' || code === 'ENOTDIR') return changedAnswer(filePath, 'deleted', 0);
    return { kind: 'failed', message: e instanceof Error ? e.message : String(e) };
  }
  try {
    for (;;) {
      const seq = Atomics.load(words, SEQ);
      const state = Atomics.load(words, STATE);
      if (state === ABANDONED) return { kind: 'abandoned' };
      const upTo = Number(Atomics.load(limit, 0));
      if (hasher.hashed < upTo) {
        if (!hasher.advance(state === FINAL ? upTo : Math.min(upTo, hasher.hashed + HASH_CHUNK_BYTES))) return changedAnswer(filePath, 'truncated', upTo);
        continue;
      }
      if (state === FINAL) {
        return { kind: 'hash', sha256: hasher.digest(), bytes: hasher.hashed, identity: hasher.identity, stamp: hasher.stamp(), ms: performance.now() - t0 };
      }
      Atomics.wait(words, SEQ, seq, WAIT_MS);
    }
  } catch (e) {
    return { kind: 'failed', message: e instanceof Error ? e.message : String(e) };
  } finally {
    hasher.close();
  }
}

/**
 * The same answer computed on the calling thread, after the read: the SHA-256 of the first `bytes` bytes of
 * `filePath`, checked to be the file `expected` names (the fallback when the hashing thread failed).
 */
export function hashPrefixNow(filePath: string, bytes: number, expected: FileIdentity | undefined): HashAnswer {
  const progress = new HashProgress();
  progress.finish(bytes);
  return checkIdentity(hashWhileRead(filePath, progress.buffer), filePath, expected);
}

/** A hash answer of another file than the one `expected` names becomes a `changed` (replaced) answer. */
export function checkIdentity(answer: HashAnswer, filePath: string, expected: FileIdentity | undefined): HashAnswer {
  if (answer.kind !== 'hash' || !expected) return answer;
  if (answer.identity.dev === expected.dev && answer.identity.ino === expected.ino) return answer;
  return changedAnswer(filePath, 'replaced', answer.bytes);
}

/**
 * Faults in the file layer, injected (tests run as root, so permissions cannot make a file unreadable): a read error
 * (EIO) mid-file, a log deleted, truncated, replaced or rewritten in place while it is being read, and a log that
 * changes again on the second read. The CLI's answer is checked in-process through `main()`: exit 2 and one plain line on stderr, never a
 * stack trace; a log that changed once is read again from the start and a note says so.
 */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { appendFileSync, closeSync, mkdtempSync, openSync, renameSync, statSync, unlinkSync, utimesSync, writeFileSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { NODE_FILES, fileByteSource, type FileHandleLike, type FileLayer, type FileStatLike } from '../../extension/node/fileSource';
import { analyzeFile, InputError } from '../../extension/node/analyzeFile';
import { main } from '../../extension/cli/main';
import { readRun } from '../../extension/core/read/index';
import { reportProblems } from '../helpers/reportSchema';

const dir = mkdtempSync(path.join(tmpdir(), 'residuum-faults-'));
const REAL: FileLayer = { ...NODE_FILES };

/** A CSV log of `n` rows with x = k * i (so two versions of the file are told apart by their values). */
function log(n: number, k: number): string {
  const rows = ['t,p_x,p_y,p_z'];
  for (let i = 0; i < n; i++) rows.push(`${(i * 0.01).toFixed(2)},${k * i},${i % 7},0`);
  return rows.join('\n') + '\n';
}

/** A CSV log of `n` rows whose p_y is (i + s) mod 7: two values of `s` give files of the same length, other bytes. */
function logShifted(n: number, s: number): string {
  const rows = ['t,p_x,p_y,p_z'];
  for (let i = 0; i < n; i++) rows.push(`${(i * 0.01).toFixed(2)},${i},${(i + s) % 7},0`);
  return rows.join('\n') + '\n';
}

/** Write `text` over the start of `p` through a descriptor opened without truncation: same inode, nothing else moves. */
function rewriteInPlace(p: string, text: string): void {
  const fd = openSync(p, 'r+');
  try {
    writeSync(fd, text, 0);
  } finally {
    closeSync(fd);
  }
}

/**
 * Set the file's modification time a day back, so that any later write moves it whatever the file system's time
 * granularity (Linux stamps writes with a clock of a few ms: a write right after this test wrote the file could keep
 * its time otherwise).
 */
function ageFile(p: string): void {
  const past = new Date(Date.now() - 86_400_000);
  utimesSync(p, past, past);
}

/**
 * Patch the real file layer: reads are cut to 16 KiB (a legal short read, so a small file comes in many chunks) and
 * `onRead(count, position)` runs before each read of `target` (count from 1; the byte offset read at); it may throw to
 * inject an error.
 */
function inject(target: string, onRead: (count: number, position: number) => void): void {
  let count = 0;
  NODE_FILES.open = async (p: string): Promise<FileHandleLike> => {
    const h = await REAL.open(p);
    return {
      stat: () => h.stat(),
      close: () => h.close(),
      read: async (buf, off, len, pos) => {
        if (p === target) onRead(++count, pos);
        return h.read(buf, off, Math.min(len, 16 * 1024), pos);
      },
    };
  };
}

afterEach(() => {
  Object.assign(NODE_FILES, REAL);
  vi.restoreAllMocks();
});

/** Run the CLI in-process; returns the exit status and what it wrote to stderr. */
async function cli(...argv: string[]): Promise<{ code: number; stderr: string }> {
  let stderr = '';
  vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => {
    stderr += typeof s === 'string' ? s : Buffer.from(s).toString('utf8');
    return true;
  });
  vi.spyOn(process.stdout, 'write').mockImplementation(() => true);
  const code = await main(argv);
  vi.restoreAllMocks();
  return { code, stderr };
}

function expectOneLine(r: { code: number; stderr: string }, re: RegExp): void {
  expect(r.code).toBe(2);
  const lines = r.stderr.trimEnd().split('\n');
  expect(lines).toHaveLength(1);
  expect(lines[0]).toMatch(/^residuum: /);
  expect(lines[0]).toMatch(re);
  expect(r.stderr).not.toMatch(/\n\s+at /);
}

describe('fault injection in the file layer', () => {
  it('an EIO read error mid-file: exit 2, one line naming the file and the error', async () => {
    const p = path.join(dir, 'eio.csv');
    writeFileSync(p, log(5000, 1));
    inject(p, (n) => {
      if (n >= 3) throw Object.assign(new Error('EIO: i/o error, read'), { code: 'EIO', errno: -5 });
    });
    await expect(analyzeFile(p)).rejects.toBeInstanceOf(InputError);
    expectOneLine(await cli('analyze', p), /log cannot be read: .*eio\.csv could not be read: EIO: i\/o error/);
  });

  it('a log deleted mid-read: exit 2, "log not found"', async () => {
    const p = path.join(dir, 'vanish.csv');
    writeFileSync(p, log(5000, 1));
    inject(p, (n) => {
      if (n === 2) unlinkSync(p);
    });
    expectOneLine(await cli('analyze', p), /log not found: .*vanish\.csv/);
  });

  it('a log truncated mid-read is read again from the start, and a note says so', async () => {
    const p = path.join(dir, 'trunc.csv');
    writeFileSync(p, log(5000, 1));
    inject(p, (n) => {
      if (n === 3) writeFileSync(p, log(40, 3)); // same inode, shorter: truncated in place
    });
    const { report, log: nav } = await analyzeFile(p);
    expect(reportProblems(report)).toEqual([]);
    expect(nav.state.length).toBe(40);
    expect(Array.from(nav.state.columns.get('p_x') ?? []).slice(0, 3)).toEqual([0, 3, 6]);
    const note = report.findings.find((f) => /truncated while it was being read/.test(f.message));
    expect(note?.message).toMatch(/it was read again from the start/);
  });

  it('a log replaced mid-read (a new file renamed over it) is read again, and a note says so', async () => {
    const p = path.join(dir, 'replace.csv');
    writeFileSync(p, log(5000, 1));
    inject(p, (n) => {
      if (n === 2) {
        writeFileSync(`${p}.new`, log(6000, 2));
        renameSync(`${p}.new`, p);
      }
    });
    const { report, log: nav } = await analyzeFile(p);
    expect(nav.state.length).toBe(6000);
    expect(nav.state.columns.get('p_x')?.[5999]).toBe(2 * 5999);
    expect(report.findings.some((f) => /replaced by another file while it was being read; it was read again/.test(f.message))).toBe(true);
  });

  it('a log rewritten in place mid-read (same inode, same length, other bytes) is read again, and a note says so', async () => {
    const p = path.join(dir, 'inplace.csv');
    const before = logShifted(5000, 0);
    const after = logShifted(5000, 3);
    expect(after.length).toBe(before.length);
    writeFileSync(p, before);
    ageFile(p);
    const ino = statSync(p).ino;
    inject(p, (n) => {
      if (n === 2) rewriteInPlace(p, after);
    });
    const { report, log: nav } = await analyzeFile(p);
    expect(statSync(p).ino).toBe(ino); // the same file, rewritten (not a new one renamed over it)
    expect(reportProblems(report)).toEqual([]);
    expect(nav.state.length).toBe(5000);
    // The new content: p_y = (i + 3) mod 7 (the first read had seen (i + 0) mod 7 in its first chunk).
    expect(Array.from(nav.state.columns.get('p_y') ?? []).slice(0, 5)).toEqual([3, 4, 5, 6, 0]);
    const note = report.findings.find((f) => f.kind === 'note' && /rewritten in place while it was being read/.test(f.message));
    expect(note?.message).toMatch(/it was read again from the start/);
  });

  it('a log rewritten in place again on the second read: exit 2, one line', async () => {
    const p = path.join(dir, 'inplace-twice.csv');
    writeFileSync(p, logShifted(5000, 0));
    ageFile(p);
    // A pass starts with a read at byte 0. In each pass, the file is rewritten before its second read (the time is set
    // back after the first rewrite, so the second moves it again whatever the clock's granularity).
    let pass = 0;
    inject(p, (_n, pos) => {
      if (pos === 0) pass++;
      else if (pass === 1 && pos === 16 * 1024) { rewriteInPlace(p, logShifted(5000, 1)); ageFile(p); }
      else if (pass === 2 && pos === 16 * 1024) rewriteInPlace(p, logShifted(5000, 2));
    });
    expectOneLine(await cli('analyze', p), /log changed again while it was being read a second time: .*rewritten in place/);
  });

  it('an append in progress (times moved, size not yet) is not taken for a rewrite: a second look sees it grown', async () => {
    // Linux moves a file's times when a write starts and its size as the bytes land; a stat in between sees the times
    // moved and the old size. Injected: the first look after read 9 (the check after the 8th chunk) reports that state,
    // with the real append made just then; the next look is the real file.
    const p = path.join(dir, 'append-in-progress.csv');
    writeFileSync(p, log(20_000, 1));
    ageFile(p);
    inject(p, () => undefined);
    const realStat = NODE_FILES.stat;
    let looks = 0;
    let faked = false;
    const files: FileLayer = {
      ...NODE_FILES,
      stat: async (q: string): Promise<FileStatLike> => {
        const st = await realStat(q);
        if (q !== p || ++looks !== 2) return st; // look 1: before the open; look 2: the check after 8 chunks
        appendFileSync(p, '200.00,1,1,1\n');
        faked = true;
        return Object.assign(Object.create(st) as FileStatLike, { mtimeMs: Date.now() }); // the old size, the times moved
      },
    };
    const nav = await readRun(fileByteSource(p, { files, rewrites: true, highWaterMark: 16 * 1024 }));
    expect(faked).toBe(true);
    expect(nav.diagnostics.filter((d) => /while it was being read/.test(d.message))).toEqual([]);
    expect(nav.state.length).toBe(20_001); // the appended row was read too
  });

  it('a log that changes again on the second read: exit 2, one line', async () => {
    const p = path.join(dir, 'unstable.csv');
    writeFileSync(p, log(5000, 1));
    // Read 2 finds it cut to 40 rows (first pass); the second pass starts on a long file again (read 3) that is cut
    // once more before read 4.
    inject(p, (n) => {
      if (n === 2 || n === 4) writeFileSync(p, log(40, 1));
      if (n === 3) writeFileSync(p, log(5000, 2));
    });
    expectOneLine(await cli('analyze', p), /log changed again while it was being read a second time: .*truncated/);
  });

  it('an analysis cancelled mid-read closes the log it opened', async () => {
    const p = path.join(dir, 'cancelled.csv');
    writeFileSync(p, log(4000, 1));
    const controller = new AbortController();
    let opened = 0;
    let closed = 0;
    NODE_FILES.open = async (q: string): Promise<FileHandleLike> => {
      const h = await REAL.open(q);
      if (q === p) opened++;
      let reads = 0;
      return {
        stat: () => h.stat(),
        close: async () => { if (q === p) closed++; return h.close(); },
        read: async (buf, off, len, pos) => {
          if (q === p && ++reads === 3) controller.abort();
          return h.read(buf, off, Math.min(len, 16 * 1024), pos);
        },
      };
    };
    await analyzeFile(p, { signal: controller.signal }).catch(() => undefined); // cancelled: a result or a rejection
    expect(opened).toBeGreaterThan(0);
    expect(closed).toBe(opened);
  });

  it('a log that only grows while it is read is not a fault: the new rows are read too', async () => {
    const p = path.join(dir, 'grow.csv');
    writeFileSync(p, log(5000, 1));
    ageFile(p); // the append moves the file's times: growth, not a rewrite
    inject(p, (n) => {
      if (n === 2) appendFileSync(p, '50.00,1,1,1\n');
    });
    const { log: nav } = await analyzeFile(p);
    expect(nav.state.length).toBe(5001);
    expect(nav.diagnostics.some((d) => /while it was being read/.test(d.message))).toBe(false);
  });

  it('fileByteSource alone: a truncation rejects chunks() with the reason, and readRun turns it into a diagnostic', async () => {
    const p = path.join(dir, 'src.csv');
    writeFileSync(p, log(5000, 1));
    inject(p, (n) => {
      if (n === 2) writeFileSync(p, 't,p_x\n');
    });
    const nav = await readRun(fileByteSource(p));
    expect(nav.diagnostics.some((d) => d.file === p && /was truncated while it was being read/.test(d.message))).toBe(true);
  });

  it('an injected layer can be passed explicitly (files option) instead of patching node:fs', async () => {
    const p = path.join(dir, 'explicit.csv');
    writeFileSync(p, log(100, 1));
    const files: FileLayer = {
      ...REAL,
      open: async () => ({
        stat: async () => REAL.statSync(p),
        close: async () => undefined,
        read: async () => { throw Object.assign(new Error('EIO: i/o error, read'), { code: 'EIO' }); },
      }),
    };
    await expect(analyzeFile(p, { files })).rejects.toThrow(/log cannot be read: .*explicit\.csv could not be read: EIO/);
  });
});

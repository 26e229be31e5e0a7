/**
 * The memory budget of the reader's columns, and the decimation that keeps a run inside it.
 *
 * Accounting: a stream's column bytes are `capacity x bytesPerRecord(stream)`, where a record costs 8 bytes of time,
 * 8 of line, 2 of file index and 8 per value of each column (a covariance column of width n*n costs 8 n^2). The sum
 * over every stream of the run is checked before any column grows, counting the old and the new arrays together (a
 * growth copies), so the columns never hold more than the budget, not even while one of them is being copied.
 *
 * Decimation: when a stream would grow past the budget it does not grow. Instead it keeps every 2nd of the records
 * it holds (records 0, 2, 4...) and from then on keeps every 2nd record it is offered; when it fills again the stride
 * doubles (every 4th, 8th...). Every stream is thinned by the same rule when its own growth is refused: state
 * records, channel updates, IMU samples, raw TDOA and range records and the reference. Kept records keep their
 * original line and time. The log's `partial` flag is set and one diagnostic says, per stream, which share was kept.
 *
 * Channel share: the NIS checks need the channel updates most, and they are usually fewer than state records or IMU
 * samples, so the other streams leave a quarter of the budget ({@link CHANNEL_SHARE}) to the channels: they are
 * thinned first. Channel updates are thinned only when they need more than what the others left them.
 */
import type { Diagnostic, NavLog } from '../model';
import type { RunBuilder, StreamBuilder } from './builder';

/** Share of the budget the non-channel streams leave to the channel updates. */
export const CHANNEL_SHARE = 0.25;

/** The hooks a StreamBuilder asks before it allocates (see StreamBuilder.guard). */
export interface GrowthGuard {
  /** Largest capacity (records) that `b` may grow to now, at most `wanted`; `b.capacity` or less means "do not grow". */
  capacityFor(b: StreamBuilder, wanted: number): number;
  /** Thin `b` in place (keep every 2nd record, double its stride) instead of growing. */
  thin(b: StreamBuilder): void;
}

/** Bytes one record of `b` costs in its columns (time, line, file index and every slot). */
export function bytesPerRecord(b: StreamBuilder): number {
  let n = 8 + 8 + 2;
  for (const s of b.slots.values()) n += 8 * s.width;
  return n;
}

/** Column bytes of `b` as allocated now. */
export function streamBytes(b: StreamBuilder): number {
  return b.capacity * bytesPerRecord(b);
}

/** Human size in binary units: "512 KiB", "3.2 MiB", "4.0 GiB" (the budget option is given in MiB). */
export function formatBytes(n: number): string {
  if (n >= 2 ** 30) return `${(n / 2 ** 30).toFixed(1)} GiB`;
  if (n >= 2 ** 20) return `${(n / 2 ** 20).toFixed(1)} MiB`;
  if (n >= 2 ** 10) return `${Math.round(n / 2 ** 10)} KiB`;
  return `${Math.round(n)} bytes`;
}

/**
 * Keep every 2nd record of `b` (indices 0, 2, 4...), in place, and double its stride. Rows freed at the end are
 * refilled with NaN (a record only writes the columns it has); file segments are moved to the kept records.
 */
export function thinStream(b: StreamBuilder): void {
  const n = b.length;
  if (b.keepEvery === 1) b.offered = n;
  const m = (n + 1) >> 1;
  for (let k = 1; k < m; k++) {
    b.t[k] = b.t[2 * k];
    b.line[k] = b.line[2 * k];
    b.fileIndex[k] = b.fileIndex[2 * k];
  }
  for (const s of b.slots.values()) {
    const w = s.width;
    const a = s.arr;
    if (w === 1) for (let k = 1; k < m; k++) a[k] = a[2 * k];
    else for (let k = 1; k < m; k++) a.copyWithin(k * w, 2 * k * w, 2 * k * w + w);
    a.fill(NaN, m * w, Math.min(a.length, (n + 1) * w));
  }
  // A segment starting at record s now starts at the first kept record at or after s; a file whose records were all
  // dropped loses its segment, and neighbours from the same file merge.
  const segs: { file: number; start: number }[] = [];
  for (const seg of b.segments) {
    const start = (seg.start + 1) >> 1;
    if (start >= m) continue;
    while (segs.length > 0 && segs[segs.length - 1].start >= start) segs.pop();
    if (segs.length > 0 && segs[segs.length - 1].file === seg.file) continue;
    segs.push({ file: seg.file, start });
  }
  b.segments.length = 0;
  b.segments.push(...segs);
  b.length = m;
  b.keepEvery *= 2;
  b.scratchDirty = false;
}

/** What a budget did to one stream. */
interface Thinned {
  stream: StreamBuilder;
  what: string;
}

/** A memory budget for the columns of one run (attach with {@link attachBudget}). */
export class ColumnBudget implements GrowthGuard {
  private readonly thinned: Thinned[] = [];

  constructor(private readonly run: RunBuilder, readonly budgetBytes: number) {}

  /**
   * See {@link GrowthGuard.capacityFor}: old and new arrays of `b` must fit beside every other stream; a stream
   * that is not a channel must also leave {@link CHANNEL_SHARE} of the budget to the channels.
   */
  capacityFor(b: StreamBuilder, wanted: number): number {
    const per = bytesPerRecord(b);
    let total = 0;
    let channels = 0;
    for (const s of this.run.builders()) total += streamBytes(s);
    for (const c of this.run.channels.values()) channels += streamBytes(c);
    const isChannel = this.run.channels.get((b as { name?: string }).name ?? '') === b;
    const reserve = isChannel ? 0 : Math.max(0, CHANNEL_SHARE * this.budgetBytes - channels);
    const room = this.budgetBytes - total - reserve;
    // While copying, the old arrays (already counted in total) and the new ones both exist.
    const cap = Math.floor(room / per);
    return Math.max(0, Math.min(wanted, cap));
  }

  /** See {@link GrowthGuard.thin}. */
  thin(b: StreamBuilder): void {
    thinStream(b);
    if (!this.thinned.some((x) => x.stream === b)) this.thinned.push({ stream: b, what: this.describe(b) });
  }

  private describe(b: StreamBuilder): string {
    const run = this.run;
    if (b === run.state) return 'state record';
    if (b === run.reference) return 'reference record';
    if (b === run.imu) return 'IMU sample';
    if (b === run.tdoa) return 'raw TDOA record';
    if (b === run.ranges) return 'range record';
    for (const [name, c] of run.channels) if (c === b) return `update of channel ${name}`;
    return 'record';
  }

  /** True once any stream was thinned. */
  get partial(): boolean {
    return this.thinned.length > 0;
  }

  /** Bytes the columns would need without thinning (every record offered, at each stream's record size). */
  neededBytes(): number {
    let n = 0;
    for (const b of this.run.builders()) {
      const records = b.keepEvery === 1 ? b.length : b.offered;
      n += records * bytesPerRecord(b);
    }
    return n;
  }

  /** The diagnostic that says what was dropped, or undefined when nothing was. */
  diagnostic(file: string): Diagnostic | undefined {
    if (!this.partial) return undefined;
    const parts = this.thinned.map(({ stream, what }) => `every ${ordinal(stream.keepEvery)} ${what} was kept (${stream.length} of ${stream.offered})`);
    return {
      severity: 'warning', kind: 'note', file, line: 0,
      message: `The log needs about ${formatBytes(this.neededBytes())} of columns, more than the ${formatBytes(this.budgetBytes)} memory budget: `
        + `${parts.join('; ')}. The analysis is partial; raise the memory budget (--memory-budget MIB) to read it whole.`,
    };
  }

  /** Mark `log` partial and add the diagnostic, when anything was thinned. */
  annotate(log: NavLog): void {
    const d = this.diagnostic(log.path);
    if (!d) return;
    log.partial = true;
    log.diagnostics.push(d);
  }
}

function ordinal(k: number): string {
  const tens = k % 100;
  if (tens >= 11 && tens <= 13) return `${k}th`;
  return `${k}${k % 10 === 1 ? 'st' : k % 10 === 2 ? 'nd' : k % 10 === 3 ? 'rd' : 'th'}`;
}

/** Put every stream of `run` (and channels created later) under a column budget of `budgetBytes`. */
export function attachBudget(run: RunBuilder, budgetBytes: number): ColumnBudget {
  const budget = new ColumnBudget(run, budgetBytes);
  run.guard = budget;
  for (const b of run.builders()) b.guard = budget;
  return budget;
}

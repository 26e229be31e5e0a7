/**
 * Linear-growth measurements of the readers: one input kind at one scale, generated to a temporary file first, then
 * read from that file in 64 KiB chunks; reports the wall time of the read alone and the process's peak resident
 * memory (generation streams to disk and holds no input in memory).
 * Kinds: `csv` (demo-scene rows), `jsonl` (demo-scene records), `long-line` (one CSV cell of scale x 1 MB),
 * `quoted` (CSV rows whose cells are quoted and span lines), `ragged` (rows of varying width with bad cells).
 */
import { createReadStream, mkdirSync, openSync, writeSync, closeSync, statSync, unlinkSync } from 'node:fs';
import { readRun, type ByteSource } from '../../extension/core/read/index';
import { generateWarehouseLog, BENCH_OPTIONS } from '../../extension/core/demo/warehouse';

const encoder = new TextEncoder();

function* textOf(kind: string, scale: number): Generator<string> {
  switch (kind) {
    case 'csv':
      yield* generateWarehouseLog({ ...BENCH_OPTIONS, rows: 20000 * scale, format: 'csv' });
      return;
    case 'jsonl':
      yield* generateWarehouseLog({ ...BENCH_OPTIONS, rows: 10000 * scale, format: 'jsonl' });
      return;
    case 'long-line': {
      yield 't,p_x,p_y,p_z,note\n0,1,2,3,';
      const piece = 'x'.repeat(1 << 16);
      for (let i = 0; i < 16 * scale; i++) yield piece;
      yield '\n0.01,1,2,3,ok\n';
      return;
    }
    case 'quoted': {
      yield 't,p_x,p_y,p_z,note\n';
      const rows: string[] = [];
      for (let i = 0; i < 50000 * scale; i++) {
        rows.push(`${(i * 0.01).toFixed(2)},"${i}.5",2,3,"a, b\nc ""d"""\n`);
        if (rows.length === 1000) { yield rows.join(''); rows.length = 0; }
      }
      yield rows.join('');
      return;
    }
    case 'ragged': {
      yield 't,p_x,p_y,p_z,nu_tdoa,s_tdoa\n';
      const rows: string[] = [];
      for (let i = 0; i < 100000 * scale; i++) {
        const w = i % 9;
        rows.push(`${(i * 0.01).toFixed(2)}` + ',1.5,abc,nan,inf,,7,8,9'.slice(0, 2 + w * 3) + '\n');
        if (rows.length === 1000) { yield rows.join(''); rows.length = 0; }
      }
      yield rows.join('');
      return;
    }
    default:
      throw new Error(`unknown growth kind '${kind}'`);
  }
}

/** Read one generated input; returns its size, the read time and the peak RSS of this process. */
export async function growthCase(kind: string, scale: number): Promise<{ kind: string; scale: number; bytes: number; read_s: number; peak_MiB: number; rows: number; diagnostics: number }> {
  mkdirSync('bench-output', { recursive: true });
  const file = `bench-output/growth-${kind}-${scale}-${process.pid}.${kind === 'jsonl' ? 'jsonl' : 'csv'}`;
  const fd = openSync(file, 'w');
  for (const text of textOf(kind, scale)) writeSync(fd, encoder.encode(text));
  closeSync(fd);
  const bytes = statSync(file).size;
  const source: ByteSource = {
    name: file,
    async *chunks() {
      for await (const chunk of createReadStream(file, { highWaterMark: 1 << 16 })) yield new Uint8Array(chunk as Buffer);
    },
  };
  try {
    const t0 = performance.now();
    const log = await readRun(source);
    const read_s = (performance.now() - t0) / 1000;
    return { kind, scale, bytes, read_s, peak_MiB: process.resourceUsage().maxRSS / 1024, rows: log.rows, diagnostics: log.diagnostics.length };
  } finally {
    unlinkSync(file);
  }
}

/**
 * Writes the demo scene's files (built to dist/gen-demo.js by scripts/build.mjs; `npm run gen-demo` runs it).
 *
 *   node dist/gen-demo.js                      the shipped demo: demo/warehouse-flight.csv and demo/anchors.csv
 *   node dist/gen-demo.js --out FILE [--rows N | --duration S] [--rate HZ] [--seed N] [--no-faults]
 *        [--format csv|jsonl|json] [--columns full|bench] [--imu-rate HZ] [--bench]
 *                                               one log (`--bench` starts from the benchmark's options)
 *
 * Files are written to a temporary name and renamed, so an interrupted run never leaves half a file.
 * Prints one JSON line on stdout: { file, bytes, lines, seconds }.
 */
import { closeSync, mkdirSync, openSync, renameSync, writeSync, unlinkSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import {
  anchorsCsv, BENCH_OPTIONS, DEMO_FLIGHT_OPTIONS, generateWarehouseLog, type DemoColumns, type DemoFormat,
  type WarehouseOptions,
} from '../extension/core/demo/warehouse';

/** Write chunks to `file` through a temporary file; returns bytes and lines written. */
export function writeChunks(file: string, chunks: Iterable<string>): { bytes: number; lines: number } {
  mkdirSync(dirname(file), { recursive: true });
  const tmp = `${file}.tmp-${process.pid}`;
  const fd = openSync(tmp, 'w');
  let bytes = 0;
  let lines = 0;
  try {
    for (const chunk of chunks) {
      const buf = Buffer.from(chunk, 'utf8');
      let off = 0;
      while (off < buf.length) off += writeSync(fd, buf, off, buf.length - off);
      bytes += buf.length;
      for (let i = buf.indexOf(10); i !== -1; i = buf.indexOf(10, i + 1)) lines++;
    }
  } catch (e) {
    closeSync(fd);
    unlinkSync(tmp);
    throw e;
  }
  closeSync(fd);
  renameSync(tmp, file);
  return { bytes, lines };
}

function numberArg(v: string | boolean | undefined, name: string): number | undefined {
  if (v === undefined || typeof v === 'boolean') return undefined;
  const x = Number(v);
  if (v.trim() === '' || !Number.isFinite(x)) throw new Error(`--${name} needs a number, got '${v}'`);
  return x;
}

/** Entry point; returns the exit status. */
export function main(argv: string[]): number {
  const { values } = parseArgs({
    args: argv,
    strict: true,
    options: {
      out: { type: 'string' }, rows: { type: 'string' }, duration: { type: 'string' }, rate: { type: 'string' },
      seed: { type: 'string' }, 'no-faults': { type: 'boolean' }, format: { type: 'string' }, columns: { type: 'string' },
      'imu-rate': { type: 'string' }, bench: { type: 'boolean' }, root: { type: 'string' },
    },
  });
  const root = resolve(typeof values.root === 'string' ? values.root : process.cwd());
  const t0 = performance.now();
  if (typeof values.out !== 'string') {
    const log = resolve(root, 'demo/warehouse-flight.csv');
    const r = writeChunks(log, generateWarehouseLog(DEMO_FLIGHT_OPTIONS));
    writeChunks(resolve(root, 'demo/anchors.csv'), [anchorsCsv()]);
    process.stdout.write(JSON.stringify({ file: log, ...r, seconds: (performance.now() - t0) / 1000 }) + '\n');
    return 0;
  }
  const o: WarehouseOptions = { ...(values.bench ? BENCH_OPTIONS : DEMO_FLIGHT_OPTIONS) };
  const rows = numberArg(values.rows, 'rows');
  const duration = numberArg(values.duration, 'duration');
  if (rows !== undefined) o.rows = rows;
  else if (duration !== undefined) { o.duration_s = duration; delete o.rows; }
  const rate = numberArg(values.rate, 'rate');
  if (rate !== undefined) o.rate_hz = rate;
  const seed = numberArg(values.seed, 'seed');
  if (seed !== undefined) o.seed = seed;
  const imu = numberArg(values['imu-rate'], 'imu-rate');
  if (imu !== undefined) o.imuRate_hz = imu;
  if (values['no-faults']) o.faults = false;
  if (typeof values.format === 'string') {
    if (!['csv', 'jsonl', 'json'].includes(values.format)) throw new Error(`--format must be csv, jsonl or json, got '${values.format}'`);
    o.format = values.format as DemoFormat;
  }
  if (typeof values.columns === 'string') {
    if (!['full', 'bench'].includes(values.columns)) throw new Error(`--columns must be full or bench, got '${values.columns}'`);
    o.columns = values.columns as DemoColumns;
  }
  const file = resolve(root, values.out);
  const r = writeChunks(file, generateWarehouseLog(o));
  process.stdout.write(JSON.stringify({ file, ...r, seconds: (performance.now() - t0) / 1000 }) + '\n');
  return 0;
}

try {
  process.exitCode = main(process.argv.slice(2));
} catch (e) {
  process.stderr.write(`gen-demo: ${(e as Error).message.split('\n')[0]}\n`);
  process.exitCode = 2;
}

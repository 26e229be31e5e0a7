/**
 * Reads one file with the run reader and prints a JSON summary: used by the corpus test to read inputs that might
 * kill the process (a fatal V8 error cannot be caught), isolated in a child process.
 * usage: node read-one.js FILE   prints { rows, state, channels: [[name, dof, length]], pX, diagnostics: [{line, severity, message}] }
 */
import { createReadStream } from 'node:fs';
import { readRun, type ByteSource } from '../../extension/core/read/index';

const file = process.argv[2];
const source: ByteSource = {
  name: file,
  async *chunks() {
    for await (const chunk of createReadStream(file, { highWaterMark: 1 << 16 })) yield new Uint8Array(chunk as Buffer);
  },
};
readRun(source).then((log) => {
  const pX = log.state.columns.get('p_x');
  process.stdout.write(JSON.stringify({
    rows: log.rows, state: log.state.length,
    channels: log.channels.map((c) => [c.name, c.dof, c.length]),
    pX: pX ? Array.from(pX.subarray(0, log.state.length)) : [],
    diagnostics: log.diagnostics.map((d) => ({ line: d.line, severity: d.severity, message: d.message })),
  }) + '\n');
}, (e: unknown) => {
  process.stderr.write(`readRun rejected: ${e instanceof Error ? e.message : String(e)}\n`);
  process.exitCode = 3;
});

// Property: the reader never throws on arbitrary input and every diagnostic has a valid line
// (1..number of lines of the input, or 0 for the whole file). Seeded fast-check runs, replayable.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { bytesSource, parseMapping, readRun } from '../../../extension/core/read/index';
import { encodeUtf8 } from '../../../extension/core/read/utf8';
import type { NavLog } from '../../../extension/core/model';

/** Lines of the input counted generously: every LF, every CR not followed by LF, plus one. */
function lineCount(b: Uint8Array): number {
  let n = 1;
  for (let i = 0; i < b.length; i++) if (b[i] === 10 || (b[i] === 13 && b[i + 1] !== 10)) n++;
  return n;
}

function checkLines(log: NavLog, mainName: string, maxLine: number): void {
  for (const d of log.diagnostics) {
    expect(Number.isInteger(d.line)).toBe(true);
    expect(d.line).toBeGreaterThanOrEqual(0);
    if (d.file === mainName) expect(d.line).toBeLessThanOrEqual(maxLine);
    if (d.column !== undefined) expect(d.column).toBeGreaterThanOrEqual(1);
    expect(typeof d.message).toBe('string');
  }
  for (let i = 0; i < log.state.length; i++) {
    expect(log.state.line[i]).toBeGreaterThanOrEqual(1);
    expect(log.state.line[i]).toBeLessThanOrEqual(maxLine);
  }
}

const names = fc.constantFrom('x.csv', 'x.jsonl', 'x.json', 'x.log');

describe('the reader never throws', () => {
  it('on arbitrary bytes, in arbitrary chunks, under any name', async () => {
    await fc.assert(fc.asyncProperty(fc.uint8Array({ maxLength: 400 }), fc.integer({ min: 1, max: 64 }), names,
      async (bytes, chunk, name) => {
        const log = await readRun(bytesSource(name, bytes, chunk));
        checkLines(log, name, lineCount(bytes));
      }), { seed: 424242, numRuns: 400 });
  });

  const cell = fc.oneof(
    fc.constantFrom('', 'nan', '-nan', 'inf', '-Infinity', '1e400', '"', '""', '"a,b"', '"x\ny"', '4-5', ' ', '#', '1.2.3',
      '2022-08-15 9:37:27.039', 'NaN', '{', '[', ']', '}', ':'),
    fc.double().map(String),
    fc.integer().map(String),
  );
  const header = fc.constantFrom('t', 'time_ms', 'p_x', 'q_w', 'q_x', 'q_y', 'q_z', 'r_11', 'r_22', 'roll', 'yaw_deg',
    'nu_c', 'nu_c_1', 's_c', 's_c_0_1', 'nis_c', 'id_c', 'rejected_c', 'gyro_x', 'tdoa_i', 'tdoa', 'range_id', 'range',
    'range_4', 'reset', 'var_p_x', 'gt_p_x', '', 'junk');
  const csvText = fc.tuple(
    fc.array(header, { minLength: 1, maxLength: 8 }),
    fc.array(fc.array(cell, { maxLength: 9 }), { maxLength: 12 }),
    fc.constantFrom(',', ';', '\t'),
    fc.constantFrom('\n', '\r\n', '\r'),
    fc.boolean(),
  ).map(([h, rows, sep, eol, meta]) => `${meta ? `# frame: NED${eol}# anchor 3: 1 2${eol}` : ''}${[h.join(sep), ...rows.map((r) => r.join(sep))].join(eol)}`);

  it('on CSV-like text', async () => {
    await fc.assert(fc.asyncProperty(csvText, fc.integer({ min: 1, max: 32 }), async (text, chunk) => {
      const bytes = encodeUtf8(text);
      const log = await readRun(bytesSource('c.csv', bytes, chunk));
      checkLines(log, 'c.csv', lineCount(bytes));
    }), { seed: 1202, numRuns: 400 });
  });

  it('on JSON-like text', async () => {
    const json = fc.jsonValue().map((v) => JSON.stringify(v, null, 1));
    const records = fc.array(fc.record({
      kind: fc.constantFrom('state', 'update', 'imu', 'tdoa', 'range', 'reset', 'other'),
      t: fc.oneof(fc.double(), fc.constant('NaN')), channel: fc.constantFrom('c', ''),
      nu: fc.array(fc.double(), { maxLength: 3 }), S: fc.array(fc.array(fc.double(), { maxLength: 3 }), { maxLength: 3 }),
      p: fc.array(fc.double(), { maxLength: 4 }), q: fc.array(fc.double(), { maxLength: 5 }),
    }, { requiredKeys: [] }), { maxLength: 6 }).map((rs) => rs.map((r) => JSON.stringify(r).replace(/"NaN"/g, 'NaN')).join('\n'));
    await fc.assert(fc.asyncProperty(fc.oneof(json, records), names, fc.integer({ min: 1, max: 16 }), async (text, name, chunk) => {
      const bytes = encodeUtf8(text);
      const log = await readRun(bytesSource(name, bytes, chunk));
      checkLines(log, name, lineCount(bytes));
    }), { seed: 99, numRuns: 300 });
  });

  it('on arbitrary mapping files', () => {
    fc.assert(fc.property(fc.oneof(fc.string(), fc.jsonValue().map((v) => JSON.stringify(v))), (text) => {
      const r = parseMapping(text, 'm.json');
      for (const d of r.diagnostics) expect(d.line).toBeGreaterThanOrEqual(1);
    }), { seed: 5, numRuns: 500 });
  });
});

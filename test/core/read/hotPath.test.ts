// The reader's hot paths against their references: parseJsonNumber and parseDecimal against ECMAScript Number() on
// the same text (round-to-nearest conversion as the language specification defines it), the JSON Lines hot path
// (jsonShape.ts) against the general JSON path of the same reader on seeded random logs full of odd records, and
// every reader against itself fed in chunks of 1 to 17 bytes (chunk boundaries must change nothing).
import { afterEach, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { NUM_INVALID, NUM_OK, numStatus, numValue, parseDecimal, parseJsonNumber } from '../../../extension/core/read/numbers';
import { jsonLineHotPath } from '../../../extension/core/read/jsonShape';
import { readLogText } from '../../../extension/core/read/index';
import { encodeUtf8 } from '../../../extension/core/read/utf8';
import type { NavLog } from '../../../extension/core/model';
import { mulberry32 } from '../../helpers/mulberry32';

/** RFC 8259 number grammar. */
const JSON_NUMBER = /^-?(0|[1-9]\d*)(\.\d+)?([eE][+-]?\d+)?/;

function jsonNumber(text: string): { stop: number; v: number } {
  const b = encodeUtf8(text);
  const stop = parseJsonNumber(b, 0, b.length);
  return { stop, v: numValue[0] };
}

function same(a: number, b: number): boolean {
  return Object.is(a, b);
}

/** Edge cases of decimal conversion, each checked against Number(). */
const EDGES = [
  '0', '-0', '0.0', '-0.0', '0e0', '-0e-5', '1', '-1', '0.1', '0.2', '0.3', '123.456e-7', '-123.456e-7',
  '9007199254740991', '9007199254740992', '9007199254740993', '18014398509481985', '123456789012345678901234567890',
  '0.1234567890123456789012345', '1e22', '1e23', '9e22', '4.35679e22', '1e-22', '1e-23', '1.7976931348623157e308',
  '1.7976931348623158e308', '1.7976931348623159e308', '2e308', '1e309', '-1e400', '2.2250738585072014e-308',
  '2.2250738585072011e-308', '4.9406564584124654e-324', '5e-324', '2.4703282292062327e-324', '2.4703282292062328e-324',
  '1e-400', '-1e-400', '1.00000000000000011102230246251565404236316680908203125', '3.141592653589793238462643383279',
  '1e0000000000000000000000001', '1E+2', '1e-2', '7.0e+00', '0.000001', '1.5e-5', '100000000000000000000000',
];

describe('parseJsonNumber', () => {
  it('equals Number() bit for bit on edge cases', () => {
    for (const text of EDGES) {
      const r = jsonNumber(text);
      expect(r.stop, text).toBe(text.length);
      expect(same(r.v, Number(text)), `${text}: ${r.v} vs ${Number(text)}`).toBe(true);
    }
  });

  it('equals Number() bit for bit on seeded random JSON numbers', () => {
    const num = fc.tuple(fc.boolean(), fc.stringMatching(/^(0|[1-9]\d{0,24})$/), fc.stringMatching(/^\d{0,24}$/),
      fc.option(fc.tuple(fc.constantFrom('e', 'E'), fc.constantFrom('', '+', '-'), fc.integer({ min: 0, max: 345 })), { nil: undefined }))
      .map(([neg, int, frac, exp]) => `${neg ? '-' : ''}${int}${frac ? `.${frac}` : ''}${exp ? `${exp[0]}${exp[1]}${exp[2]}` : ''}`);
    fc.assert(fc.property(num, (text) => {
      const r = jsonNumber(text);
      expect(r.stop).toBe(text.length);
      expect(same(r.v, Number(text))).toBe(true);
    }), { seed: 20261202, numRuns: 20000 });
  });

  it('doubles printed with 17 significant digits or shortest round-trip parse back exactly', () => {
    fc.assert(fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), (x) => {
      for (const text of [x.toPrecision(17), String(x), x.toExponential()]) {
        if (!JSON_NUMBER.test(text) || JSON_NUMBER.exec(text)?.[0] !== text) continue;
        expect(same(jsonNumber(text).v, Number(text))).toBe(true);
      }
    }), { seed: 11, numRuns: 5000 });
  });

  it('stops where the JSON grammar stops, and refuses what is not a JSON number', () => {
    const rnd = mulberry32(5);
    const alphabet = '0123456789+-.eExX aN';
    for (let n = 0; n < 20000; n++) {
      let text = '';
      const len = 1 + Math.floor(rnd() * 10);
      for (let k = 0; k < len; k++) text += alphabet[Math.floor(rnd() * alphabet.length)];
      const m = JSON_NUMBER.exec(text);
      const r = jsonNumber(text);
      // A dangling fraction or exponent (`0.`, `1e+`) refuses the token outright rather than stopping before it.
      const dangling = m !== null && /^[.eE]/.test(text.slice(m[0].length));
      if (dangling) expect([-1, m[0].length], text).toContain(r.stop);
      else expect(r.stop, text).toBe(m ? m[0].length : -1);
      if (m && r.stop > 0) expect(same(r.v, Number(m[0])), text).toBe(true);
    }
    for (const bad of ['+1', '.5', '-', '-.5', 'NaN', 'Infinity', '1.', '1e', '1e+', 'x1F']) expect(jsonNumber(bad).stop, bad).toBe(-1);
    // `01` and `0x1F` stop after the 0: the scanner then sees no delimiter and leaves the line to the general parser
    expect(jsonNumber('01').stop).toBe(1);
    expect(jsonNumber('0x1F').stop).toBe(1);
  });
});

describe('parseDecimal edge cases (CSV cells)', () => {
  function cell(text: string): { status: number; v: number } {
    const b = encodeUtf8(`${text},`);
    const status = parseDecimal(b, 0, b.length, 0x2c);
    return { status, v: numValue[0] };
  }

  it('equals Number() on decimal spellings JSON forbids but CSV writers use', () => {
    for (const text of [...EDGES.filter((t) => Number.isFinite(Number(t))), '+1', '+0.5', '.5', '-.5', '5.', '-5.', '+.5e3', '00012', '-00.25']) {
      const r = cell(text);
      expect(r.status, text).toBe(NUM_OK);
      expect(same(r.v, Number(text)), `${text}: ${r.v} vs ${Number(text)}`).toBe(true);
    }
  });

  it('treats hex-like and other garbage as not a number (where Number() would read hex)', () => {
    for (const text of ['0x1F', '0b101', '1_000', '1.2.3', '--1', '1e5e5', '12abc']) {
      expect(cell(text).status, text).toBe(NUM_INVALID);
      expect(numStatus).toBe(NUM_INVALID);
    }
  });
});

/** A NavLog as plain JSON, every typed array as the hex of its bytes (so -0, NaN payloads and order all count). */
function fingerprint(log: NavLog): string {
  return JSON.stringify(log, (_k, v: unknown) => {
    if (ArrayBuffer.isView(v)) return Buffer.from(v.buffer, v.byteOffset, v.byteLength).toString('hex');
    if (v instanceof Map) return [...v.entries()];
    if (typeof v === 'number' && !Number.isFinite(v)) return String(v);
    if (typeof v === 'number' && Object.is(v, -0)) return '-0';
    return v;
  });
}

/** A seeded JSON Lines log: mostly regular records, with every odd form the general path has a rule for. */
function randomJsonl(seed: number, records: number): string {
  const rnd = mulberry32(seed);
  const pick = <T>(xs: T[]): T => xs[Math.floor(rnd() * xs.length)];
  const ws = (): string => (rnd() < 0.1 ? pick([' ', '  ', '\t']) : '');
  const num = (): string => {
    const r = rnd();
    if (r < 0.6) return (rnd() * 20 - 10).toFixed(6);
    if (r < 0.7) return String((rnd() - 0.5) * 10 ** Math.floor(rnd() * 40 - 20));
    if (r < 0.75) return pick(['0', '-0', '-0.0', '1e400', '-1e400', '5e-324', '123456789012345678901', '0.1e1', '1E+2']);
    if (r < 0.78) return pick(['NaN', 'Infinity', '-Infinity', 'null', 'true', '"1.5"', '"abc"', '"2024-01-01T00:00:01Z"', '[1]', '{}', '01', '+1', '.5']);
    return (rnd() * 2).toFixed(Math.floor(rnd() * 17));
  };
  const vec = (n: number): string => {
    const len = rnd() < 0.03 ? n + pick([-1, 1]) : n;
    if (rnd() < 0.03) return `{"x":${num()},"y":${num()}${len >= 3 ? `,"z":${num()}` : ''}}`;
    return `[${Array.from({ length: Math.max(0, len) }, () => `${ws()}${num()}`).join(',')}]`;
  };
  const obj = (pairs: [string, string][]): string => `{${pairs.map(([k, v]) => `${ws()}"${k}"${ws()}:${ws()}${v}`).join(',')}}`;
  const lines: string[] = [];
  let t = 0;
  for (let n = 0; n < records; n++) {
    t += 0.01;
    const time = rnd() < 0.02 ? pick(['"2024-01-01T00:00:01Z"', 'null', '"x"']) : t.toFixed(6);
    const r = rnd();
    let line: string;
    if (r < 0.45) {
      const pairs: [string, string][] = [['kind', '"state"'], ['t', time], ['p', vec(3)], ['v', vec(3)], ['q', vec(4)]];
      if (rnd() < 0.8) pairs.push(['sigma', obj([['p', vec(3)], ['v', vec(3)], ['att', vec(3)]])]);
      if (rnd() < 0.5) pairs.push(['gt', obj([['p', vec(3)], ['q', vec(4)]])]);
      if (rnd() < 0.05) pairs.push(['foo', num()]);
      if (rnd() < 0.03) pairs.push(['p', vec(3)]); // duplicate key: the later value wins
      if (rnd() < 0.03) pairs.push(['P', '{"states":["p_x","p_y"],"matrix":[[1,0],[0,1]]}']);
      if (rnd() < 0.02) pairs.push(['channel', '"mag"']);
      if (rnd() < 0.03) pairs.reverse();
      line = obj(pairs);
    } else if (r < 0.75) {
      const ch = pick(['tdoa', 'tdoa', 'mag', 'gnss']);
      const id = pick(['"0-1"', '"2-3"', '" 4-5 "', '7', '7.0', 'null', '"a\\"b"', '"\u00e9"', '""']);
      const pairs: [string, string][] = [['kind', pick(['"update"', '"Update"'])], ['t', time], ['channel', `"${ch}"`]];
      if (ch === 'mag') pairs.push(['nu', vec(3)], ['S', `[${[0, 1, 2].map(() => vec(3)).join(',')}]`]);
      else if (ch === 'gnss') pairs.push(['nis', num()]);
      else pairs.push(['id', id], ['nu', `[${num()}]`], ['S', rnd() < 0.1 ? num() : `[[${num()}]]`]);
      pairs.push(['rejected', pick(['false', 'true', '0', '1', 'null'])]);
      if (rnd() < 0.02) pairs.splice(2, 1);
      line = obj(pairs);
    } else if (r < 0.83) {
      line = obj([['kind', '"imu"'], ['t', time], ['gyro', vec(3)], ['acc', vec(3)]]);
    } else if (r < 0.88) {
      line = obj([['kind', '"tdoa"'], ['t', time], ['i', pick(['"0"', '"1"', '2'])], ['j', pick(['"3"', '"4"'])], ['d', num()]]);
    } else if (r < 0.92) {
      line = obj([['kind', '"range"'], ['t', time], ['anchor', pick(['"5"', '"6"', '5'])], ['r', num()]]);
    } else if (r < 0.93) {
      line = obj([['kind', '"reset"'], ['t', time]]);
    } else if (r < 0.94) {
      line = obj([['kind', pick(['"gnss_raw"', '"log"'])], ['t', time]]);
    } else if (r < 0.95) {
      line = obj([['t', time], ['gyro', vec(3)], ['acc', vec(3)]]); // kind inferred
    } else {
      line = pick(['', '   ', '[1,2]', '42', '{"t":1,', '{"t":1,,"p":[1,2,3]}', '{"t":1}x', '\f{"t":1}', '{"t":1,"p":[1,2,3]} ',
        '{"kind":"state","t":1,"p":[1,2,3],"q":[1,0,0,0],"v":[0,0,0],"bg":[0,0,0]}', '\u00a0{"t":2}', '{"t":3,"p":[1,2,3]}\t']);
    }
    lines.push(`${ws()}${line}`);
  }
  return `${lines.join(rnd() < 0.5 ? '\n' : '\r\n')}\n`;
}

afterEach(() => {
  jsonLineHotPath.enabled = true;
});

async function readBoth(text: string, name: string, chunkSize?: number): Promise<{ fast: string; general: string }> {
  jsonLineHotPath.enabled = true;
  const fast = fingerprint(await readLogText(text, name, chunkSize ? { chunkSize } : {}));
  jsonLineHotPath.enabled = false;
  const general = fingerprint(await readLogText(text, name, chunkSize ? { chunkSize } : {}));
  jsonLineHotPath.enabled = true;
  return { fast, general };
}

describe('JSON Lines hot path equals the general path', () => {
  it('on seeded random logs with odd records (columns, lines, diagnostics, ids, resets)', async () => {
    for (const seed of [1, 2, 3, 4, 5, 6]) {
      const text = randomJsonl(seed, 1500);
      const { fast, general } = await readBoth(text, `r${seed}.jsonl`);
      expect(fast.length).toBeGreaterThan(1000);
      expect(fast === general, `seed ${seed}`).toBe(true);
    }
  });

  it('on a regular log, where nearly every line takes the hot path', async () => {
    const rnd = mulberry32(9);
    const lines: string[] = [];
    for (let n = 0; n < 3000; n++) {
      const f = (): string => (rnd() * 10 - 5).toFixed(6);
      lines.push(`{"kind":"state","t":${(n * 0.01).toFixed(6)},"p":[${f()},${f()},${f()}],"q":[1,0,0,0],"sigma":{"p":[0.5,0.5,0.5]},"gt":{"p":[${f()},${f()},${f()}]}}`);
      if (n % 2 === 0) lines.push(`{"kind":"update","t":${(n * 0.01).toFixed(6)},"channel":"tdoa","id":"${n % 7}-${n % 5}","nu":[${f()}],"S":[[0.01]],"rejected":${n % 11 === 0}}`);
    }
    const { fast, general } = await readBoth(`${lines.join('\n')}\n`, 'regular.jsonl');
    expect(fast === general).toBe(true);
  });

  it('in chunks of 1 to 17 bytes as when read whole', async () => {
    const text = randomJsonl(77, 150);
    jsonLineHotPath.enabled = true;
    const whole = fingerprint(await readLogText(text, 'c.jsonl'));
    for (let size = 1; size <= 17; size++) {
      const { fast, general } = await readBoth(text, 'c.jsonl', size);
      expect(fast === whole, `chunk ${size}`).toBe(true);
      expect(general === whole, `chunk ${size} (general path)`).toBe(true);
    }
  });
});

/** A seeded CSV log: metadata, plain and quoted cells, empty cells, words, CRLF or LF. */
function randomCsv(seed: number, rows: number): string {
  const rnd = mulberry32(seed);
  const pick = <T>(xs: T[]): T => xs[Math.floor(rnd() * xs.length)];
  const out = ['# frame: ENU', '# anchor 1: 1 2 3', 't,p_x,p_y,p_z,q_w,q_x,q_y,q_z,nu_tdoa,s_tdoa,id_tdoa,nu_mag_0,nu_mag_1,s_mag_0_0,s_mag_1_1'];
  for (let n = 0; n < rows; n++) {
    const f = (): string => {
      const r = rnd();
      if (r < 0.85) return (rnd() * 20 - 10).toFixed(Math.floor(rnd() * 12));
      if (r < 0.9) return '';
      if (r < 0.93) return pick(['1e400', 'nan', 'inf', '-0', '+.5', '5.', ' 2.5 ', '"3.25"', 'abc', '1.2.3', '12345678901234567890.5']);
      return `${(rnd() * 10).toExponential(Math.floor(rnd() * 16))}`;
    };
    const cells = [(n * 0.01).toFixed(4), f(), f(), f(), '1', '0', '0', '0', f(), f(), pick(['0-1', '"2-3"', '4', '']), f(), f(), f(), f()];
    if (rnd() < 0.02) cells.pop();
    if (rnd() < 0.02) cells.push('9');
    out.push(cells.join(','));
  }
  return `${out.join(rnd() < 0.5 ? '\n' : '\r\n')}\n`;
}

describe('CSV reader across chunk boundaries', () => {
  it('in chunks of 1 to 17 bytes as when read whole', async () => {
    for (const seed of [3, 4]) {
      const text = randomCsv(seed, 120);
      const whole = fingerprint(await readLogText(text, 'c.csv'));
      expect(whole).toContain('bad-value');
      for (let size = 1; size <= 17; size++) {
        expect(fingerprint(await readLogText(text, 'c.csv', { chunkSize: size })) === whole, `seed ${seed} chunk ${size}`).toBe(true);
      }
    }
  });
});

describe('medianInPlace (selection instead of a sort, for the time-gap checks)', () => {
  it('equals the median of the sorted values on seeded random arrays with ties', async () => {
    const { medianInPlace } = await import('../../../extension/core/stats/median');
    const rnd = mulberry32(42);
    for (let n = 0; n < 400; n++) {
      const len = 1 + Math.floor(rnd() * 300);
      const ties = rnd() < 0.5;
      const a = Float64Array.from({ length: len }, () => (ties ? Math.floor(rnd() * 5) * 0.01 : rnd() * 0.02 + 0.005));
      const sorted = Float64Array.from(a).sort();
      const m = len >> 1;
      const expected = len % 2 ? sorted[m] : 0.5 * (sorted[m - 1] + sorted[m]);
      expect(medianInPlace(a)).toBe(expected);
    }
    expect(Number.isNaN(medianInPlace(new Float64Array(0)))).toBe(true);
  });
});

describe('JSON Lines columns reserved from the file size, under a memory budget', () => {
  /** `n` state records and a 1-dof update on every 2nd. */
  function jsonl(n: number): string {
    const lines: string[] = [];
    for (let i = 0; i < n; i++) {
      lines.push(`{"kind":"state","t":${(i * 0.01).toFixed(2)},"p":[${i},${2 * i},${-i}],"q":[1,0,0,0]}`);
      if (i % 2 === 0) lines.push(`{"kind":"update","t":${(i * 0.01).toFixed(2)},"channel":"uwb","nu":[${(i % 7) / 10}],"S":[[0.25]]}`);
    }
    return `${lines.join('\n')}\n`;
  }

  it('reads the whole log when the budget holds its columns once (no doubling needed), else decimates', async () => {
    const n = 6000;
    const text = jsonl(n);
    const full = await readLogText(text, 'b.jsonl');
    expect(full.state.length).toBe(n);
    // State: t, line, file index and 7 values; the channel: t, line, file index, nu, S, id (bytes per record).
    const needed = n * (18 + 7 * 8) + (n / 2) * (18 + 3 * 8);
    const roomy = await readLogText(text, 'b.jsonl', { memoryBudgetBytes: Math.ceil(needed * 1.5) });
    expect(roomy.partial).toBeUndefined();
    expect(fingerprint(roomy)).toBe(fingerprint(full));
    const tight = await readLogText(text, 'b.jsonl', { memoryBudgetBytes: Math.floor(needed / 3) });
    expect(tight.partial).toBe(true);
    expect(tight.state.length).toBeLessThan(n);
    // Kept records are records of the full read (same time, line and values), in order.
    const k = Math.round(n / tight.state.length);
    for (let i = 0; i < tight.state.length; i += 97) {
      expect(tight.state.line[i]).toBe(full.state.line[i * k]);
      expect(tight.state.columns.get('p_y')?.[i]).toBe(full.state.columns.get('p_y')?.[i * k]);
    }
  });
});

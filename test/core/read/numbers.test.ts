// The byte-level decimal parser against the outside reference: ECMAScript Number() on the same text
// (round-to-nearest conversion as the language specification defines it), over seeded random decimals.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { NUM_INVALID, NUM_MISSING, NUM_NONFINITE, NUM_OK, numStatus, numStop, numValue, parseDecimal, parseNumberText } from '../../../extension/core/read/numbers';
import { encodeUtf8 } from '../../../extension/core/read/utf8';

function parse(text: string): { v: number; status: number; stop: number } {
  const b = encodeUtf8(`${text},`);
  const status = parseDecimal(b, 0, b.length, 0x2c);
  expect(status).toBe(numStatus);
  return { v: numValue[0], status, stop: numStop };
}

describe('parseDecimal', () => {
  it('equals Number() bit for bit on random decimals (fast path and fallback)', () => {
    const decimal = fc.tuple(fc.boolean(), fc.stringMatching(/^\d{1,20}$/), fc.stringMatching(/^\d{0,20}$/),
      fc.option(fc.integer({ min: -330, max: 330 }), { nil: undefined }))
      .map(([neg, int, frac, exp]) => `${neg ? '-' : ''}${int}${frac ? `.${frac}` : ''}${exp !== undefined ? `e${exp}` : ''}`);
    fc.assert(fc.property(decimal, (text) => {
      const r = parse(text);
      // overflow (e.g. 9e330) is a non-finite value, reported as such
      expect(r.status).toBe(Number.isFinite(Number(text)) ? NUM_OK : NUM_NONFINITE);
      expect(Object.is(r.v, Number(text)) || r.v === Number(text)).toBe(true);
      expect(r.stop).toBe(text.length);
    }), { seed: 20261202, numRuns: 5000 });
  });

  it('doubles as written with %.17g round-trip exactly', () => {
    fc.assert(fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), (x) => {
      const text = x.toPrecision(17);
      expect(parse(text).v).toBe(Number(text));
    }), { seed: 7, numRuns: 3000 });
  });

  it('classifies empty, nan, inf and garbage cells', () => {
    expect(parse('').status).toBe(NUM_MISSING);
    expect(parse('  ').status).toBe(NUM_MISSING);
    expect(parse('NaN').status).toBe(NUM_MISSING);
    expect(parse('-nan').status).toBe(NUM_MISSING);
    expect(parse('inf')).toMatchObject({ v: Infinity, status: NUM_NONFINITE });
    expect(parse('-Infinity')).toMatchObject({ v: -Infinity, status: NUM_NONFINITE });
    expect(parse('1.2.3').status).toBe(NUM_INVALID);
    expect(parse('1e').status).toBe(NUM_INVALID);
    expect(parse('-').status).toBe(NUM_INVALID);
    expect(parse(' 2.5 ')).toMatchObject({ v: 2.5, status: NUM_OK });
    expect(parse('1.7330379647499617e+18').v).toBe(1.7330379647499617e18);
    expect(parse('1733037964618398643').v).toBe(Number('1733037964618398643'));
  });

  it('parseNumberText agrees', () => {
    expect(parseNumberText(' 1e-3 ')).toBe(0.001);
    expect(numStatus).toBe(NUM_OK);
    parseNumberText('abc');
    expect(numStatus).toBe(NUM_INVALID);
  });
});

// Regression tests for two defects the seeded fuzz harness (scripts/fuzz/properties.ts) found in the reader:
// 1. Cause: a header cell such as `nu_c_11111111111` (a component index of 2^32 or more, e.g. digits repeated by byte
//    damage) sized the channel as index + 1 components, and `new Array(dof)` threw `RangeError: Invalid array
//    length` from compilePlan (plan.ts). Fix: component indices are capped at MAX_COMPONENTS and the column is
//    named in a diagnostic (file, line, column) instead.
// 2. Cause: diagnostics quoted whole header cells; an unterminated quote turned the rest of the file into one header
//    cell, giving a 648-character "Column ... is not a name" message. Fix: every message builder in core/read quotes
//    user text through clip() (diagnostics.ts): at most QUOTE_MAX_CHARS characters, ellipsis, control characters as spaces.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { bytesSource, parseMapping, readLogText, readRun } from '../../../extension/core/read/index';
import { clip, QUOTE_MAX_CHARS } from '../../../extension/core/read/diagnostics';
import { MAX_COMPONENTS } from '../../../extension/core/read/plan';
import { parseAnchorsText } from '../../../extension/core/read/anchors';
import type { Diagnostic } from '../../../extension/core/model';

/** Longest message allowed: a plain sentence around at most a few quoted pieces (the harness's own bound is similar). */
const MAX_MESSAGE = 300;

function expectShortPlain(ds: Diagnostic[]): void {
  for (const d of ds) {
    expect(d.message.length, d.message.slice(0, 200)).toBeLessThanOrEqual(MAX_MESSAGE);
    expect(/[\n\r]/.test(d.message), d.message.slice(0, 200)).toBe(false);
  }
}

describe('header robustness (fuzz regressions)', () => {
  it('a component index of 2^32 or more does not throw; the column is named with file, line and column', async () => {
    for (const header of ['t,p_x,nu_c_11111111111', 't,p_x,nu_c_4294967296', 't,p_x,nu_c_0,s_c_0_4294967296', 't,p_x,innov_c_99999999999999999999999']) {
      const log = await readLogText(`${header}\n0,1,2,3\n`, 'big.csv');
      const named = log.diagnostics.filter((d) => d.kind === 'unknown-column' && d.message.includes('innovation component'));
      expect(named.length, header).toBe(1);
      expect(named[0]).toMatchObject({ file: 'big.csv', line: 1 });
      expect(named[0].column).toBeGreaterThanOrEqual(1);
      for (const ch of log.channels) expect(ch.dof).toBeLessThanOrEqual(MAX_COMPONENTS);
      expectShortPlain(log.diagnostics);
    }
  });

  it('property (seeded): headers with any digit strings as component indices never throw', async () => {
    const header = fc.array(fc.tuple(fc.constantFrom('nu_c_', 'innov_c_', 's_c_0_', 's_c_', 'nis_c', 'p_x', 't'), fc.stringMatching(/^[0-9]{0,25}$/)),
      { minLength: 1, maxLength: 6 }).map((cells) => cells.map(([a, b]) => a + b).join(','));
    await fc.assert(fc.asyncProperty(header, async (h) => {
      const log = await readRun(bytesSource('h.csv', new TextEncoder().encode(`${h}\n0,1,2,3,4,5\n`)));
      for (const ch of log.channels) expect(ch.dof).toBeLessThanOrEqual(MAX_COMPONENTS);
      expectShortPlain(log.diagnostics);
    }), { seed: 20261202, numRuns: 300 });
  });

  it('an unterminated quote in the header (the fuzz counterexample shape) gives a short one-line message', async () => {
    const rest = Array.from({ length: 30 }, (_, k) => `${k * 1.2345e100},NAN,-inf,abc`).join('\n');
    const log = await readLogText(`# meta\n"quoted, cell",0.5,"unterminated\n${rest}\n`, 'q.csv');
    const unknown = log.diagnostics.filter((d) => d.message.includes('is not a name of the log conventions'));
    expect(unknown.length).toBeGreaterThan(0);
    expect(unknown.some((d) => d.message.includes('\u2026'))).toBe(true);
    expectShortPlain(log.diagnostics);
  });

  it('long column names, cells, mapping keys, roles and anchor ids are quoted at most QUOTE_MAX_CHARS long', async () => {
    const long = 'x'.repeat(600);
    const csv = await readLogText(`t,${long},p_x\n0,1,${long}\n1,2,inf${long}\n`, 'long.csv');
    expectShortPlain(csv.diagnostics);
    expect(csv.diagnostics.length).toBeGreaterThan(0);
    const json = await readLogText(`{"kind":"${long}","t":0}\n{"kind":"state","t":1,"p":"${long}"}\n`, 'long.jsonl');
    expectShortPlain(json.diagnostics);
    expect(json.diagnostics.length).toBeGreaterThan(0);
    const map = parseMapping(JSON.stringify({ columns: { [long]: `nu_${long}_0`, a: long }, time: { zone: long }, [long]: 1 }), 'm.map.json');
    expect(map.diagnostics.length).toBeGreaterThan(0);
    expectShortPlain(map.diagnostics);
    const anchors = parseAnchorsText(`${long},1,2,3\n${long},1,2,3\n${long}\n`, 'a.csv');
    expect(anchors.diagnostics.length).toBeGreaterThan(0);
    expectShortPlain(anchors.diagnostics);
  });

  it('clip keeps short text as is, cuts long text with an ellipsis and never splits a surrogate pair', () => {
    expect(clip('p_x')).toBe('p_x');
    expect(clip('a\nb\tc')).toBe('a b c');
    const cut = clip('y'.repeat(200));
    expect(cut.length).toBe(QUOTE_MAX_CHARS);
    expect(cut.endsWith('\u2026')).toBe(true);
    const emoji = clip('z'.repeat(QUOTE_MAX_CHARS - 2) + '\u{1F600}'.repeat(5));
    expect(emoji.length).toBeLessThanOrEqual(QUOTE_MAX_CHARS);
    expect(/[\ud800-\udbff]\u2026/.test(emoji)).toBe(false);
  });
});

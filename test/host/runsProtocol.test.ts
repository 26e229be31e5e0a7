/**
 * The compare and Monte Carlo messages through the protocol guards (extension/protocol.ts): the webview's requests
 * pass only as clean copies of well-formed messages, anything else is a reason string the host logs and ignores;
 * the host's updates are recognised by the webview only with their columns as buffers.
 */
import { describe, expect, it } from 'vitest';
import { parseCompareAlign, parseHostMessage, parseWebviewMessage } from '../../extension/protocol';

describe('webview -> host: compare and Monte Carlo requests', () => {
  it('accepts the plain requests as clean copies (extra fields dropped)', () => {
    expect(parseWebviewMessage({ type: 'compare/add', path: '/etc/passwd' })).toEqual({ type: 'compare/add' });
    expect(parseWebviewMessage({ type: 'montecarlo/pick', folder: '/' })).toEqual({ type: 'montecarlo/pick' });
    expect(parseWebviewMessage({ type: 'compare/export', format: 'md', target: '/tmp/x' })).toEqual({ type: 'compare/export', format: 'md' });
    expect(parseWebviewMessage({ type: 'compare/remove', run: 2 })).toEqual({ type: 'compare/remove', run: 2 });
  });
  it('accepts the three alignments, as the command line does', () => {
    expect(parseWebviewMessage({ type: 'compare/align', align: { by: 'time' } })).toEqual({ type: 'compare/align', align: { by: 'time' } });
    expect(parseWebviewMessage({ type: 'compare/align', align: { by: 'start', kind: 'x' } })).toEqual({ type: 'compare/align', align: { by: 'start' } });
    expect(parseWebviewMessage({ type: 'compare/align', align: { by: 'event', kind: 'bias-step' } })).toEqual({ type: 'compare/align', align: { by: 'event', kind: 'bias-step' } });
  });
  it('rejects malformed alignments, exports and removals with a reason', () => {
    for (const align of [undefined, null, 'time', { by: 'end' }, { by: 'event' }, { by: 'event', kind: '<img src=x>' }, { by: 'event', kind: 'a'.repeat(80) }, [{ by: 'time' }]]) {
      const r = parseWebviewMessage({ type: 'compare/align', align });
      expect(typeof r, JSON.stringify(align)).toBe('string');
      expect(r).toMatch(/^compare\/align: /);
    }
    for (const format of ['pdf', undefined, 'HTML']) expect(parseWebviewMessage({ type: 'compare/export', format })).toBe('compare/export: format is not html or md');
    // Run 0 is the panel's own log and stays; negative, fractional, huge or non-numeric indices are refused.
    for (const run of [0, -1, 1.5, 1e9, '1', undefined]) expect(parseWebviewMessage({ type: 'compare/remove', run })).toMatch(/^compare\/remove: /);
    expect(parseCompareAlign({ by: 'event', kind: 'Bias-Step' })).toBeUndefined();
  });
});

describe('host -> webview: compare and Monte Carlo updates', () => {
  const compare = { type: 'compare/update', state: 'ready', align: { by: 'start' }, eventKinds: [], runs: [], figures: [], overlays: [] };
  const f64 = (n: number): ArrayBuffer => new Float64Array(n).buffer;
  const series = { key: 'montecarlo/nis/tdoa', kind: 'nis', name: 'tdoa', dof: 1, epochs: 2, x: f64(2), y: f64(2), lo: f64(2), hi: f64(2) };
  const mc = { type: 'montecarlo/update', state: 'ready', files: ['a.csv', 'b.csv'], runs: 2, series: [series], notes: [] };
  it('recognises well-formed updates', () => {
    expect(parseHostMessage(compare)).toBe(compare);
    expect(parseHostMessage(mc)).toBe(mc);
  });
  it('ignores updates with a bad state, alignment or columns', () => {
    expect(parseHostMessage({ ...compare, state: 'done' })).toBeUndefined();
    expect(parseHostMessage({ ...compare, align: { by: 'nowhere' } })).toBeUndefined();
    expect(parseHostMessage({ ...compare, figures: 'none' })).toBeUndefined();
    expect(parseHostMessage({ ...mc, series: [{ ...series, lo: [0, 1] }] })).toBeUndefined();
    expect(parseHostMessage({ ...mc, runs: -1 })).toBeUndefined();
  });
});

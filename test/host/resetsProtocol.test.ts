/** The reset messages of the panel are untrusted input: checked field by field, unknown fields dropped. */
import { describe, expect, it } from 'vitest';
import { parseWebviewMessage } from '../../extension/protocol';

describe('reset/confirm and reset/unconfirm from the webview', () => {
  it('accepts well-formed messages and keeps only known fields', () => {
    expect(parseWebviewMessage({ type: 'reset/confirm', t: 60, factor: 812.5, block: 'v', path: '/etc/passwd' }))
      .toEqual({ type: 'reset/confirm', t: 60, factor: 812.5, block: 'v' });
    expect(parseWebviewMessage({ type: 'reset/confirm', t: -2.5 })).toEqual({ type: 'reset/confirm', t: -2.5 });
    expect(parseWebviewMessage({ type: 'reset/unconfirm', t: 60, extra: true })).toEqual({ type: 'reset/unconfirm', t: 60 });
  });

  it('refuses malformed ones with a reason naming the message', () => {
    const bad: unknown[] = [
      { type: 'reset/confirm' },
      { type: 'reset/confirm', t: '60' },
      { type: 'reset/confirm', t: Number.POSITIVE_INFINITY },
      { type: 'reset/confirm', t: 1, factor: -3 },
      { type: 'reset/confirm', t: 1, factor: Number.NaN },
      { type: 'reset/confirm', t: 1, block: '' },
      { type: 'reset/confirm', t: 1, block: 'x'.repeat(65) },
      { type: 'reset/unconfirm', t: null },
    ];
    for (const m of bad) {
      const r = parseWebviewMessage(m);
      expect(typeof r).toBe('string');
      expect(r).toMatch(/^reset\/(un)?confirm: /);
    }
  });
});

/**
 * The panel's export request through the protocol guard: only `html` or `md` pass, anything else is a reason string.
 */
import { describe, it, expect } from 'vitest';
import { parseWebviewMessage } from '../../extension/protocol';

describe('report/export message', () => {
  it('accepts html and md, as clean copies', () => {
    expect(parseWebviewMessage({ type: 'report/export', format: 'html', extra: '<script>' })).toEqual({ type: 'report/export', format: 'html' });
    expect(parseWebviewMessage({ type: 'report/export', format: 'md' })).toEqual({ type: 'report/export', format: 'md' });
  });
  it('rejects any other format with a reason', () => {
    for (const format of ['pdf', undefined, 1, 'HTML', '../../etc/passwd']) {
      expect(parseWebviewMessage({ type: 'report/export', format })).toBe('report/export: format is not html or md');
    }
  });
});

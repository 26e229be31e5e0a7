import { describe, expect, it } from 'vitest';
import { parseHostMessage, parseWebviewMessage } from '../../extension/protocol';
import { tagsFromField } from '../../extension/core/notes/sidecar';

describe('notes messages from the webview are checked field by field', () => {
  it('accepts well-formed messages and keeps only known fields', () => {
    expect(parseWebviewMessage({ type: 'notes/request', extra: 1 })).toEqual({ type: 'notes/request' });
    expect(parseWebviewMessage({ type: 'notes/add', t: 1.5, tEnd: 2, channel: 'tdoa', updateId: '4-5', finding: 'outlier', text: 'x', tags: ['a'], evil: '<script>' })).toEqual({
      type: 'notes/add',
      t: 1.5,
      tEnd: 2,
      channel: 'tdoa',
      updateId: '4-5',
      finding: 'outlier',
      text: 'x',
      tags: ['a'],
    });
    expect(parseWebviewMessage({ type: 'notes/edit', id: 'n-1', status: 'resolved' })).toEqual({ type: 'notes/edit', id: 'n-1', status: 'resolved' });
    expect(parseWebviewMessage({ type: 'notes/delete', id: 'n-1' })).toEqual({ type: 'notes/delete', id: 'n-1' });
    expect(parseWebviewMessage({ type: 'code/goto', name: 'nu_tdoa' })).toEqual({ type: 'code/goto', name: 'nu_tdoa' });
  });

  it('refuses malformed ones with a reason', () => {
    const bad: unknown[] = [
      { type: 'notes/add', t: Number.NaN, text: 'x', tags: [] },
      { type: 'notes/add', t: 2, tEnd: 1, text: 'x', tags: [] },
      { type: 'notes/add', t: 1, text: 'x'.repeat(4001), tags: [] },
      { type: 'notes/add', t: 1, text: 'x', tags: [1] },
      { type: 'notes/add', t: 1, text: 'x', tags: Array.from({ length: 33 }, (_, i) => `t${i}`) },
      { type: 'notes/add', t: 1, text: 'x', tags: [], channel: '' },
      { type: 'notes/edit', id: '', text: 'x' },
      { type: 'notes/edit', id: 'n', status: 'done' },
      { type: 'notes/delete', id: 5 },
      { type: 'code/goto', name: '' },
    ];
    for (const m of bad) expect(typeof parseWebviewMessage(m), JSON.stringify(m).slice(0, 80)).toBe('string');
  });

  it('the webview accepts notes/update only with a list and a pending count', () => {
    expect(parseHostMessage({ type: 'notes/update', notes: [], pending: 0 })).toEqual({ type: 'notes/update', notes: [], pending: 0 });
    expect(parseHostMessage({ type: 'notes/update', notes: {}, pending: 0 })).toBeUndefined();
    expect(parseHostMessage({ type: 'notes/update', notes: [], pending: -1 })).toBeUndefined();
  });

  it('the panel form splits a tags field', () => {
    expect(tagsFromField('nlos, rack  #aisle-3;nlos')).toEqual(['nlos', 'rack', 'aisle-3']);
    expect(tagsFromField('   ')).toEqual([]);
  });
});

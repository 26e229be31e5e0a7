// Runtime validation of messages from the webview (extension/protocol.ts). Messages are untrusted input: every
// field is checked, unknown or malformed messages are refused with a reason, and only known fields are copied.
import { describe, expect, it } from 'vitest';
import { parseHostMessage, parsePersistedState, parseViewState, parseWebviewMessage } from '../../extension/protocol';

describe('parseWebviewMessage', () => {
  it('accepts well-formed messages and copies only known fields', () => {
    expect(parseWebviewMessage({ type: 'ready' })).toEqual({ type: 'ready' });
    expect(parseWebviewMessage({ type: 'ready', widthPx: 1310, view: { view: 'bias' } })).toEqual({ type: 'ready', widthPx: 1310, view: { view: 'bias' } });
    expect(parseWebviewMessage({ type: 'series/request', id: 3, key: 'nis/tdoa', t0: 1, t1: 2, widthPx: 800, extra: 'x' })).toEqual({
      type: 'series/request', id: 3, key: 'nis/tdoa', t0: 1, t1: 2, widthPx: 800,
    });
    expect(parseWebviewMessage({ type: 'series/request', id: 4, key: 'nis/tdoa', widthPx: 800, line: false })).toEqual({ type: 'series/request', id: 4, key: 'nis/tdoa', widthPx: 800, line: false });
    expect(
      parseWebviewMessage({
        type: 'series/requestBatch',
        requests: [
          { type: 'series/request', id: 5, key: 'a', widthPx: 10, t0: 0, t1: 1, line: false, junk: 1 },
          { type: 'series/request', id: 6, key: 'b', widthPx: 20 },
        ],
        extra: true,
      }),
    ).toEqual({
      type: 'series/requestBatch',
      requests: [
        { type: 'series/request', id: 5, key: 'a', widthPx: 10, t0: 0, t1: 1, line: false },
        { type: 'series/request', id: 6, key: 'b', widthPx: 20 },
      ],
    });
    expect(parseWebviewMessage({ type: 'reveal/line', line: 2343, file: 0, t: 23.41, worstIndex: 0 })).toEqual({ type: 'reveal/line', line: 2343, file: 0, t: 23.41, worstIndex: 0 });
    expect(parseWebviewMessage({ type: 'cursor/didChange', t: 5 })).toEqual({ type: 'cursor/didChange', t: 5 });
    expect(parseWebviewMessage({ type: 'log/write', level: 'error', message: 'x'.repeat(5000) })).toEqual({ type: 'log/write', level: 'error', message: 'x'.repeat(4000) });
  });

  it('refuses malformed and unknown messages with a reason', () => {
    const bad: unknown[] = [
      null,
      'ready',
      [],
      { type: 'nope' },
      { type: 'series/request', id: -1, key: 'k', widthPx: 10 },
      { type: 'series/request', id: 1.5, key: 'k', widthPx: 10 },
      { type: 'series/request', id: 1, key: '', widthPx: 10 },
      { type: 'series/request', id: 1, key: 'k', widthPx: 0 },
      { type: 'series/request', id: 1, key: 'k', widthPx: 1e9 },
      { type: 'series/request', id: 1, key: 'k', widthPx: 10, t0: 5, t1: 1 },
      { type: 'series/request', id: 1, key: 'k', widthPx: 10, t0: NaN },
      { type: 'series/request', id: 1, key: 'k', widthPx: 10, line: true },
      { type: 'series/requestBatch', requests: [] },
      { type: 'ready', widthPx: 0 },
      { type: 'ready', widthPx: 12.5 },
      { type: 'ready', widthPx: '800' },
      { type: 'series/requestBatch', requests: 'x' },
      { type: 'series/requestBatch', requests: [{ type: 'series/request', id: 1, key: 'k', widthPx: 10 }, { type: 'series/request', id: 2, key: 'k', widthPx: 0 }] },
      { type: 'series/requestBatch', requests: [{ type: 'reveal/line', line: 3 }] },
      { type: 'series/requestBatch', requests: Array.from({ length: 513 }, (_, i) => ({ type: 'series/request', id: i, key: 'k', widthPx: 10 })) },
      { type: 'reveal/line', line: 0 },
      { type: 'reveal/line', line: 3.5 },
      { type: 'reveal/line', line: '12' },
      { type: 'reveal/line', line: 12, file: -1 },
      { type: 'reveal/line', line: 12, file: '../../etc/passwd' },
      { type: 'cursor/didChange', t: Infinity },
      { type: 'log/write', level: 'fatal', message: 'm' },
    ];
    for (const b of bad) expect(typeof parseWebviewMessage(b), JSON.stringify(b)).toBe('string');
  });
});

describe('state guards', () => {
  it('keeps a valid view state and drops bad fields', () => {
    expect(parseViewState({ view: 'errors', window: [1, 2], cursor_s: 3, worstIndex: 1, junk: true })).toEqual({ view: 'errors', window: [1, 2], cursor_s: 3, worstIndex: 1 });
    expect(parseViewState({ window: [2, 1], cursor_s: 'x', worstIndex: -2 })).toEqual({});
    expect(parseViewState(7)).toBeUndefined();
  });
  it('restores a panel only with a log URI', () => {
    expect(parsePersistedState({ uri: 'file:///a.csv', view: { view: 'bias' } })).toEqual({ uri: 'file:///a.csv', view: { view: 'bias' } });
    expect(parsePersistedState({ uri: 'file:///a.csv' })).toEqual({ uri: 'file:///a.csv', view: {} });
    expect(parsePersistedState({ view: {} })).toBeUndefined();
    expect(parsePersistedState(undefined)).toBeUndefined();
  });
});

describe('parseHostMessage', () => {
  it('recognises host messages and ignores foreign ones', () => {
    expect(parseHostMessage({ type: 'cursor/set', t: 1 })).toEqual({ type: 'cursor/set', t: 1 });
    expect(parseHostMessage({ type: 'series/response', id: 1, key: 'k', x: new ArrayBuffer(8), y: new Float64Array(1) })).toBeDefined();
    expect(parseHostMessage({ type: 'series/response', id: 1, key: 'k', x: [1], y: [2] })).toBeUndefined();
    const one = { type: 'series/response', id: 1, key: 'k', x: new ArrayBuffer(8), y: new ArrayBuffer(8), inWindow: 1 };
    expect(parseHostMessage({ type: 'series/responseBatch', responses: [one, { ...one, id: 2 }] })).toBeDefined();
    expect(parseHostMessage({ type: 'series/responseBatch', responses: [one, { ...one, x: [1] }] })).toBeUndefined();
    expect(parseHostMessage({ type: 'series/responseBatch', responses: [{ ...one, type: 'status' }] })).toBeUndefined();
    expect(parseHostMessage({ type: 'status', state: 'busy', uri: 'u' })).toBeUndefined();
    expect(parseHostMessage({ type: 'init', report: {}, series: [], files: [] })).toBeUndefined();
    expect(parseHostMessage({ source: 'react-devtools' })).toBeUndefined();
  });
});

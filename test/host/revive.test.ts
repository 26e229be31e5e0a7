// Choosing the panels to open again after the extension host restarted (extension/host/revive.ts), and the guard of
// the webview's view/didChange message (extension/protocol.ts). Pure logic; the real restart is in
// test/e2e/live.e2e.test.ts.
import { describe, expect, it } from 'vitest';
import { orphansToRevive, parseKeptPanels } from '../../extension/host/revive';
import { parseWebviewMessage } from '../../extension/protocol';

describe('panels kept for an extension host restart', () => {
  const kept = parseKeptPanels({
    'file:///w/a.csv': { title: 'Residuum: a.csv', view: { view: 'innovations', worstIndex: 1, bogus: 3 } },
    'file:///w/b.csv': { title: 'Residuum: b.csv', view: { window: [5, 1] } },
    'file:///w/bad.csv': { title: 7 },
  });

  it('reads the kept panels and drops what is malformed', () => {
    expect([...kept.keys()]).toEqual(['file:///w/a.csv', 'file:///w/b.csv']);
    expect(kept.get('file:///w/a.csv')?.view).toEqual({ view: 'innovations', worstIndex: 1 });
    // A window whose start is not before its end is not a window.
    expect(kept.get('file:///w/b.csv')?.view).toEqual({});
    expect(parseKeptPanels(null).size).toBe(0);
    expect(parseKeptPanels(['x']).size).toBe(0);
  });

  it('opens again only visible tabs of kept logs that have no panel, each log once', () => {
    const tabs = [
      { label: 'Residuum: a.csv', active: true, id: 1 },
      { label: 'Residuum: a.csv', active: true, id: 2 },
      { label: 'Residuum: b.csv', active: false, id: 3 },
      { label: 'Residuum: c.csv', active: true, id: 4 },
    ];
    const out = orphansToRevive(tabs, kept, () => false);
    expect(out.map((o) => [o.tab.id, o.uri])).toEqual([[1, 'file:///w/a.csv']]);
    expect(out[0].view).toEqual({ view: 'innovations', worstIndex: 1 });
    // A log whose panel exists (revived by the serializer, or never lost) is left alone.
    expect(orphansToRevive(tabs, kept, (u) => u === 'file:///w/a.csv')).toEqual([]);
  });
});

describe('view/didChange from the webview', () => {
  it('is accepted with a valid view state and refused otherwise', () => {
    expect(parseWebviewMessage({ type: 'view/didChange', view: { view: 'bias', cursor_s: 2.5 } })).toEqual({ type: 'view/didChange', view: { view: 'bias', cursor_s: 2.5 } });
    expect(parseWebviewMessage({ type: 'view/didChange', view: 'bias' })).toMatch(/view\/didChange/);
    expect(parseWebviewMessage({ type: 'view/didChange' })).toMatch(/view\/didChange/);
  });
});

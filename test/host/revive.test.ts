// Choosing the panels to open again after the extension host restarted (extension/host/revive.ts), and the guard of
// the webview's view/didChange message (extension/protocol.ts). Pure logic; the real restart is in
// test/e2e/live.e2e.test.ts.
import { describe, expect, it } from 'vitest';
import { keptOrphans, orphansToRevive, panelTitles, parseKeptPanels } from '../../extension/host/revive';
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
    expect(out.revive.map((o) => [o.tab.id, o.uri])).toEqual([[1, 'file:///w/a.csv']]);
    expect(out.revive[0].view).toEqual({ view: 'innovations', worstIndex: 1 });
    expect(out.ambiguous).toEqual([]);
    // A log whose panel exists (revived by the serializer, or never lost) is left alone.
    expect(orphansToRevive(tabs, kept, (u) => u === 'file:///w/a.csv')).toEqual({ revive: [], ambiguous: [] });
  });
});

describe('logs with the same file name in different folders', () => {
  it('get titles that tell them apart by the fewest trailing folders, and plain titles otherwise', () => {
    const titles = panelTitles([
      { key: 'a', path: '/w/run-a/flight.csv' },
      { key: 'b', path: '/w/run-b/flight.csv' },
      { key: 'c', path: '/w/other.csv' },
      { key: 'd', path: '/x/day1/tunnel.csv' },
      { key: 'e', path: '/y/day1/tunnel.csv' },
    ]);
    expect(Object.fromEntries(titles)).toEqual({
      a: 'Residuum: flight.csv (run-a)',
      b: 'Residuum: flight.csv (run-b)',
      c: 'Residuum: other.csv',
      d: 'Residuum: tunnel.csv (x/day1)',
      e: 'Residuum: tunnel.csv (y/day1)',
    });
    // Alone again (the other panel closed), a log's title is its file name.
    expect(panelTitles([{ key: 'a', path: '/w/run-a/flight.csv' }]).get('a')).toBe('Residuum: flight.csv');
    // Equal paths (other URI schemes) fall back to the keys.
    expect(Object.fromEntries(panelTitles([{ key: 'file:///f.csv', path: '/f.csv' }, { key: 'vscode-remote://h/f.csv', path: '/f.csv' }]))).toEqual({
      'file:///f.csv': 'Residuum: f.csv (file:///f.csv)',
      'vscode-remote://h/f.csv': 'Residuum: f.csv (vscode-remote://h/f.csv)',
    });
  });

  it('each come back with their own log after an extension host restart', () => {
    // Kept with the titles panelTitles gives them; only b's tab is visible.
    const titles = panelTitles([{ key: 'file:///w/run-a/flight.csv', path: '/w/run-a/flight.csv' }, { key: 'file:///w/run-b/flight.csv', path: '/w/run-b/flight.csv' }]);
    const kept = parseKeptPanels({
      'file:///w/run-a/flight.csv': { title: titles.get('file:///w/run-a/flight.csv'), view: { view: 'bias' } },
      'file:///w/run-b/flight.csv': { title: titles.get('file:///w/run-b/flight.csv'), view: { view: 'errors' } },
    });
    const tabs = [
      { label: 'Residuum: flight.csv (run-a)', active: false, id: 1 },
      { label: 'Residuum: flight.csv (run-b)', active: true, id: 2 },
    ];
    const out = orphansToRevive(tabs, kept, () => false);
    expect(out.revive.map((o) => [o.tab.id, o.uri, o.view.view])).toEqual([[2, 'file:///w/run-b/flight.csv', 'errors']]);
  });

  it('never gives a tab another log when its title fits several kept logs', () => {
    // Titles kept before they were made unique: both logs under one title. The visible tab is b's, but nothing in
    // the tab says so; matching by title alone gave it a's log (the first kept).
    const kept = parseKeptPanels({
      'file:///w/run-a/flight.csv': { title: 'Residuum: flight.csv', view: { view: 'bias' } },
      'file:///w/run-b/flight.csv': { title: 'Residuum: flight.csv', view: { view: 'errors' } },
    });
    const tab = { label: 'Residuum: flight.csv', active: true, id: 2 };
    const out = orphansToRevive([tab], kept, () => false);
    expect(out.revive).toEqual([]);
    expect(out.ambiguous).toEqual([tab]);
    // Once one of the two has a panel again, the title fits one log only.
    expect(orphansToRevive([tab], kept, (u) => u === 'file:///w/run-a/flight.csv').revive.map((o) => o.uri)).toEqual(['file:///w/run-b/flight.csv']);
  });
});

describe('kept entries of hidden tabs left by a restart', () => {
  it('are carried over while their tab is open and has no panel, and dropped otherwise', () => {
    const kept = parseKeptPanels({
      'file:///w/run-a/flight.csv': { title: 'Residuum: flight.csv (run-a)', view: { view: 'bias' } },
      'file:///w/run-b/flight.csv': { title: 'Residuum: flight.csv (run-b)', view: {} },
      'file:///w/closed.csv': { title: 'Residuum: closed.csv', view: {} },
    });
    // b was opened again (it has a panel); a's tab is still open, hidden; closed.csv's tab was closed.
    const out = keptOrphans(kept, (u) => u === 'file:///w/run-b/flight.csv', new Set(['Residuum: flight.csv (run-a)']));
    expect([...out.keys()]).toEqual(['file:///w/run-a/flight.csv']);
    expect(out.get('file:///w/run-a/flight.csv')?.view).toEqual({ view: 'bias' });
  });
});

describe('view/didChange from the webview', () => {
  it('is accepted with a valid view state and refused otherwise', () => {
    expect(parseWebviewMessage({ type: 'view/didChange', view: { view: 'bias', cursor_s: 2.5 } })).toEqual({ type: 'view/didChange', view: { view: 'bias', cursor_s: 2.5 } });
    expect(parseWebviewMessage({ type: 'view/didChange', view: 'bias' })).toMatch(/view\/didChange/);
    expect(parseWebviewMessage({ type: 'view/didChange' })).toMatch(/view\/didChange/);
  });
});

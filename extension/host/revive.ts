/**
 * Opening panels again after the extension host restarted. VS Code 1.100 revives a webview panel through its
 * serializer only when the window loads (a reload, a new start); when the extension host alone restarts, the panel's
 * tab stays with its old page and nothing behind it. The panel manager therefore keeps, in the workspace state, the
 * log and view state of every open panel; after an activation it looks for visible Residuum tabs that no panel owns
 * (once the serializer had its chance) and opens each again in the same column and state. No `vscode` here: the
 * choice is pure, so unit tests check it.
 *
 * The tab API shows a webview tab's label and nothing of its webview's saved state, so a tab is matched to its log by
 * its title; every panel's title is therefore unique ({@link panelTitles}: logs with the same file name in different
 * folders are told apart by their folders), and a tab whose title fits several kept logs is left alone rather than
 * given a log it may not have shown. (After a window reload the serializer gets each panel's own saved state, log
 * URI included, and matches nothing by title: extension/host/panels.ts deserializeWebviewPanel.)
 */
import { parseViewState, type ViewState } from '../protocol';

/** What the workspace state keeps per open panel, by log URI (string form). */
export interface KeptPanel {
  /** The panel's title when it was kept (how its tab is recognised). */
  title: string;
  view: ViewState;
}

/** A Residuum panel tab as the tab API shows it. */
export interface PanelTab {
  label: string;
  /** The tab is the visible one of its group. */
  active: boolean;
}

/** The kept panels from the workspace state (anything malformed is dropped). */
export function parseKeptPanels(value: unknown): Map<string, KeptPanel> {
  const out = new Map<string, KeptPanel>();
  if (typeof value !== 'object' || value === null || Array.isArray(value)) return out;
  for (const [uri, entry] of Object.entries(value as Record<string, unknown>)) {
    if (typeof entry !== 'object' || entry === null) continue;
    const e = entry as { title?: unknown; view?: unknown };
    if (typeof e.title !== 'string' || e.title.length > 1024) continue;
    out.set(uri, { title: e.title, view: parseViewState(e.view) ?? {} });
  }
  return out;
}

/** A log of an open panel: its key (the URI's string form) and its path (the URI's path, '/'-separated). */
export interface TitledLog {
  key: string;
  path: string;
}

/** The name and the folders of a '/'-separated path (empty segments dropped). */
function splitPath(p: string): { name: string; dirs: string[] } {
  const parts = p.split('/').filter((x) => x !== '');
  return { name: parts.pop() ?? p, dirs: parts };
}

/**
 * The title of each panel, by key: `Residuum: <file name>`; when several of the logs share a file name, each of
 * those is followed by the fewest trailing folders of its path that tell them all apart, e.g.
 * `Residuum: flight.csv (run-a)` and `Residuum: flight.csv (run-b)`, or `(a/day1)` and `(b/day1)`. Logs whose
 * whole paths are equal (other URI schemes) are told apart by their keys.
 */
export function panelTitles(logs: readonly TitledLog[]): Map<string, string> {
  const byName = new Map<string, { key: string; dirs: string[] }[]>();
  for (const l of logs) {
    const { name, dirs } = splitPath(l.path);
    const list = byName.get(name) ?? [];
    list.push({ key: l.key, dirs });
    byName.set(name, list);
  }
  const out = new Map<string, string>();
  for (const [name, list] of byName) {
    if (list.length === 1) {
      out.set(list[0].key, `Residuum: ${name}`);
      continue;
    }
    const deepest = Math.max(...list.map((e) => e.dirs.length));
    let tails: string[] | undefined;
    for (let depth = 1; depth <= deepest && !tails; depth++) {
      const t = list.map((e) => e.dirs.slice(-depth).join('/'));
      if (new Set(t).size === t.length) tails = t;
    }
    list.forEach((e, i) => out.set(e.key, `Residuum: ${name} (${tails ? tails[i] : e.key})`));
  }
  return out;
}

/**
 * The tabs to open again, each with the log URI and view state it showed: visible tabs whose title is that of
 * exactly one kept panel whose log has no panel now (`hasPanel`); a kept entry is used at most once. Visible tabs
 * whose title fits several such kept panels (titles kept before they were made unique) are `ambiguous`: no guess.
 */
export function orphansToRevive<T extends PanelTab>(tabs: readonly T[], kept: ReadonlyMap<string, KeptPanel>,
  hasPanel: (uri: string) => boolean): { revive: { tab: T; uri: string; view: ViewState }[]; ambiguous: T[] } {
  const used = new Set<string>();
  const revive: { tab: T; uri: string; view: ViewState }[] = [];
  const ambiguous: T[] = [];
  for (const tab of tabs) {
    if (!tab.active) continue;
    const fits = [...kept].filter(([uri, entry]) => entry.title === tab.label && !hasPanel(uri));
    if (fits.length > 1) {
      ambiguous.push(tab);
      continue;
    }
    const [uri, entry] = fits[0] ?? [];
    if (uri === undefined || entry === undefined || used.has(uri)) continue;
    used.add(uri);
    revive.push({ tab, uri, view: entry.view });
  }
  return { revive, ambiguous };
}

/**
 * The kept entries to carry over when the kept panels are written again: those of logs without a panel whose title
 * is still the label of an open tab no panel owns (`orphanLabels`), so a hidden tab left by a restart can still be
 * opened again when it is shown, after the visible ones were.
 */
export function keptOrphans(previous: ReadonlyMap<string, KeptPanel>, hasPanel: (uri: string) => boolean,
  orphanLabels: ReadonlySet<string>): Map<string, KeptPanel> {
  const out = new Map<string, KeptPanel>();
  for (const [uri, entry] of previous) if (!hasPanel(uri) && orphanLabels.has(entry.title)) out.set(uri, entry);
  return out;
}

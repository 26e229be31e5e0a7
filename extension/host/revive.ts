/**
 * Opening panels again after the extension host restarted. VS Code 1.100 revives a webview panel through its
 * serializer only when the window loads (a reload, a new start); when the extension host alone restarts, the panel's
 * tab stays with its old page and nothing behind it. The panel manager therefore keeps, in the workspace state, the
 * log and view state of every open panel; after an activation it looks for visible Residuum tabs that no panel owns
 * (once the serializer had its chance) and opens each again in the same column and state. No `vscode` here: the
 * choice is pure, so unit tests check it.
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

/**
 * The tabs to open again, each with the log URI and view state it showed: visible tabs whose title is that of a kept
 * panel whose log has no panel now (`hasPanel`). A kept entry is used at most once.
 */
export function orphansToRevive<T extends PanelTab>(tabs: readonly T[], kept: ReadonlyMap<string, KeptPanel>,
  hasPanel: (uri: string) => boolean): { tab: T; uri: string; view: ViewState }[] {
  const used = new Set<string>();
  const out: { tab: T; uri: string; view: ViewState }[] = [];
  for (const tab of tabs) {
    if (!tab.active) continue;
    for (const [uri, entry] of kept) {
      if (used.has(uri) || entry.title !== tab.label || hasPanel(uri)) continue;
      used.add(uri);
      out.push({ tab, uri, view: entry.view });
      break;
    }
  }
  return out;
}

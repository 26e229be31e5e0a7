/**
 * UI components of the panel. This is the ONLY file that imports @vscode/webview-ui-toolkit: the toolkit is
 * deprecated (microsoft/vscode-webview-ui-toolkit#561), and keeping it behind these few functions makes a later move
 * to @vscode-elements/elements a change of one file. Lists that carry the e2e hooks (`<button data-line>`) stay
 * native elements, styled in style.css.
 */
import {
  provideVSCodeDesignSystem,
  vsCodeBadge,
  vsCodeButton,
  vsCodeDivider,
  vsCodePanels,
  vsCodePanelTab,
  vsCodePanelView,
  vsCodeProgressRing,
} from '@vscode/webview-ui-toolkit';

let registered = false;

/** Register the components used (once). */
export function registerUi(): void {
  if (registered) return;
  registered = true;
  provideVSCodeDesignSystem().register(
    vsCodeBadge(),
    vsCodeButton(),
    vsCodeDivider(),
    vsCodePanels(),
    vsCodePanelTab(),
    vsCodePanelView(),
    vsCodeProgressRing(),
  );
}

/** A themed button with `text` (set as text, never HTML). */
export function button(text: string, onClick: () => void, appearance: 'primary' | 'secondary' = 'secondary'): HTMLElement {
  const b = document.createElement('vscode-button');
  b.setAttribute('appearance', appearance);
  b.textContent = text;
  b.addEventListener('click', onClick);
  return b;
}

/** A small count badge. */
export function badge(count: number): HTMLElement {
  const b = document.createElement('vscode-badge');
  b.textContent = String(count);
  return b;
}

/** An indeterminate progress ring. */
export function progressRing(): HTMLElement {
  const r = document.createElement('vscode-progress-ring');
  r.setAttribute('aria-label', 'Reading the log');
  return r;
}

/** A horizontal divider. */
export function divider(): HTMLElement {
  return document.createElement('vscode-divider');
}

/** Tabs built by {@link tabs}. */
export interface Tabs {
  root: HTMLElement;
  /** The content element of each view, by id. */
  views: Map<string, HTMLElement>;
  /** Activate a view. */
  select(id: string): void;
}

/** Tabs with one view each; `onSelect` is told the id of the view the user activates. */
export function tabs(items: readonly { id: string; label: string; count?: number }[], active: string, onSelect: (id: string) => void): Tabs {
  const root = document.createElement('vscode-panels');
  root.setAttribute('aria-label', 'Analysis views');
  const views = new Map<string, HTMLElement>();
  const tabIds = new Map<string, string>();
  items.forEach((item, i) => {
    const tab = document.createElement('vscode-panel-tab');
    tab.id = `tab-${i}`;
    tab.textContent = item.label;
    if (item.count !== undefined && item.count > 0) tab.append(' ', badge(item.count));
    tabIds.set(item.id, tab.id);
    root.append(tab);
  });
  items.forEach((item, i) => {
    const view = document.createElement('vscode-panel-view');
    view.id = `view-${i}`;
    const content = document.createElement('div');
    content.className = 'view';
    content.dataset.view = item.id;
    view.append(content);
    views.set(item.id, content);
    root.append(view);
  });
  const initial = tabIds.get(active) ?? 'tab-0';
  root.setAttribute('activeid', initial);
  root.addEventListener('change', () => {
    // The property first: the toolkit reflects `activeid` to the attribute only after the change event.
    const activeId = (root as HTMLElement & { activeid?: string }).activeid ?? root.getAttribute('activeid');
    const item = items.find((it) => tabIds.get(it.id) === activeId);
    if (item) onSelect(item.id);
  });
  return {
    root,
    views,
    select: (id) => {
      const tabId = tabIds.get(id);
      if (tabId) root.setAttribute('activeid', tabId);
    },
  };
}

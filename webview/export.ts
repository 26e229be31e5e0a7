/**
 * The panel's export buttons: "Export report..." (HTML) and "Markdown summary..."; the host opens the save dialog
 * and writes the file (extension/host/exportCommands.ts).
 */
import { el } from './dom';
import { button } from './ui';

/** Two buttons in a group; `onExport` gets the chosen format. */
export function exportButtons(onExport: (format: 'html' | 'md') => void): HTMLElement {
  return el(
    'div',
    { class: 'export', role: 'group', 'aria-label': 'Export' },
    button('Export report...', () => onExport('html')),
    button('Markdown summary...', () => onExport('md')),
  );
}

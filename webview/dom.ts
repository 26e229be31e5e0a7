/**
 * Tiny DOM builders. Text (column names, ids, messages from the log) is always set with `textContent`, never parsed
 * as HTML; attributes are set one by one.
 */

/** Create `tag` with attributes and children (strings become text nodes). */
export function el<K extends keyof HTMLElementTagNameMap>(
  tag: K,
  attrs: Record<string, string> = {},
  ...children: (Node | string)[]
): HTMLElementTagNameMap[K] {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, v);
  for (const c of children) e.append(typeof c === 'string' ? document.createTextNode(c) : c);
  return e;
}

/** A table with a caption, header cells and rows of text cells. */
export function table(caption: string, header: readonly string[], rows: readonly (readonly string[])[]): HTMLTableElement {
  const t = el('table');
  t.append(el('caption', {}, caption));
  const head = el('tr');
  for (const h of header) head.append(el('th', { scope: 'col' }, h));
  t.append(el('thead', {}, head));
  const body = el('tbody');
  for (const r of rows) {
    const tr = el('tr');
    for (const c of r) tr.append(el('td', {}, c));
    body.append(tr);
  }
  t.append(body);
  return t;
}

/**
 * Escaping for the exported reports. Every text that comes from a log (column and channel names, update ids,
 * metadata, notes, file names, finding messages that quote them) goes through these before it is written, so markup
 * in a log shows as text: nothing it holds becomes an element, an attribute or a link.
 */

/** Text for HTML element content or a double-quoted attribute value: `& < > " '` as character references. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`).replace(/[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f]/g, '\ufffd');
}

/**
 * Text for Markdown (GitHub-flavoured, as in a pull-request comment), one line: HTML specials as character
 * references (so no tag or entity is formed), Markdown punctuation backslash-escaped (so no emphasis, link, image,
 * heading, table cell or, at the start, list item is formed), line breaks as spaces, and `:` after a word as a character reference (no
 * `scheme:` autolink).
 */
export function escapeMarkdown(text: string): string {
  return text
    .replace(/[\r\n\t]+/g, ' ')
    .replace(/[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f]/g, '\ufffd')
    .replace(/&/g, '&amp;')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .replace(/[\\`*_{}[\]()#+!|~"]/g, (c) => `\\${c}`)
    .replace(/^(\s*)-/, '$1\\-')
    .replace(/^(\s*)(\d{1,9})([.)])(?=\s|$)/, '$1$2\\$3')
    .replace(/([a-z][a-z0-9+]*):/gi, '$1&#58;');
}

/** A number for display: `digits` significant decimals, or '-' when absent. */
export function fmtNum(v: unknown, digits = 3): string {
  if (typeof v !== 'number' || !Number.isFinite(v)) return '-';
  if (v !== 0 && (Math.abs(v) >= 1e6 || Math.abs(v) < 1e-3)) return v.toExponential(2);
  return Number.isInteger(v) ? String(v) : v.toFixed(digits);
}

/** A share 0..1 as a percentage with one decimal, or '-'. */
export function fmtPct(v: unknown): string {
  return typeof v === 'number' && Number.isFinite(v) ? `${(100 * v).toFixed(1)}%` : '-';
}

/** The last path segment of a file name (either separator). */
export function baseName(path: string): string {
  const parts = path.split(/[\\/]/);
  return parts[parts.length - 1] || path;
}

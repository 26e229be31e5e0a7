/**
 * The text edit behind the `unknown-column` quick fix: add a column to a mapping file's `columns` (see
 * schema/mapping.schema.json), creating the file when absent. Pure: text in, text out, so it is tested without an
 * editor. The column is added with role `ignore` (silences the diagnostic; the user then picks the real role, with
 * the schema's completion).
 */

/** Result of adding a column: the new text, or why the file was left alone. */
export type MappingEdit = { ok: true; text: string; added: boolean } | { ok: false; reason: string };

/**
 * Add `column` to the mapping JSON `text` (undefined: no file yet) as `"column": "ignore"`. A column already
 * present (same name) is left as it is (`added` false). Malformed JSON or a non-object `columns` is not touched.
 */
export function addColumnToMapping(text: string | undefined, column: string): MappingEdit {
  let doc: Record<string, unknown>;
  if (text === undefined || text.trim() === '') doc = { version: 1 };
  else {
    let parsed: unknown;
    try {
      parsed = JSON.parse(text);
    } catch (e) {
      return { ok: false, reason: `the mapping file is not valid JSON (${e instanceof Error ? e.message : String(e)}); fix it first` };
    }
    if (typeof parsed !== 'object' || parsed === null || Array.isArray(parsed)) return { ok: false, reason: 'the mapping file does not hold a JSON object' };
    doc = parsed as Record<string, unknown>;
  }
  const columns = doc.columns ?? {};
  if (typeof columns !== 'object' || columns === null || Array.isArray(columns)) return { ok: false, reason: '"columns" in the mapping file is not an object' };
  const cols = columns as Record<string, unknown>;
  if (Object.prototype.hasOwnProperty.call(cols, column)) return { ok: true, text: text ?? '', added: false };
  doc.columns = { ...cols, [column]: 'ignore' };
  return { ok: true, text: `${JSON.stringify(doc, null, 2)}\n`, added: true };
}

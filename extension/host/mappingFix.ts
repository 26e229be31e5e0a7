/**
 * Quick fix for `unknown-column` diagnostics: add the column to the log's mapping file (`<log>.map.json`, or the
 * file named in `residuum.mapping.file`), creating it when absent. The write is atomic (a temporary file beside
 * it, then a rename), so a crash never leaves half a mapping file. The watcher then re-reads the log.
 */
import * as path from 'node:path';
import * as vscode from 'vscode';
import { addColumnToMapping } from './mappingEdit';
import { DIAGNOSTIC_SOURCE, unknownColumnKey } from './problems';

/** Command run by the quick fix (internal, not in the palette). */
export const ADD_COLUMN_COMMAND = 'residuum.addColumnToMapping';

/** Offers "Add column … to the mapping file" on `unknown-column` diagnostics. */
export class MappingFixProvider implements vscode.CodeActionProvider {
  /** Kinds this provider offers. */
  static readonly providedCodeActionKinds = [vscode.CodeActionKind.QuickFix];

  constructor(private readonly columns: Map<string, string>, private readonly mapFor: (log: vscode.Uri) => vscode.Uri) {}

  /** One quick fix per `unknown-column` diagnostic in the context. */
  provideCodeActions(document: vscode.TextDocument, _range: vscode.Range, context: vscode.CodeActionContext): vscode.CodeAction[] {
    const out: vscode.CodeAction[] = [];
    for (const d of context.diagnostics) {
      if (d.source !== DIAGNOSTIC_SOURCE || codeOf(d) !== 'unknown-column') continue;
      const column = this.columns.get(unknownColumnKey(document.uri, d));
      if (column === undefined) continue;
      const map = this.mapFor(document.uri);
      const action = new vscode.CodeAction(`Map column "${column}" as ignored in ${path.posix.basename(map.path)}`, vscode.CodeActionKind.QuickFix);
      action.diagnostics = [d];
      action.isPreferred = true;
      action.command = { title: action.title, command: ADD_COLUMN_COMMAND, arguments: [map, column] };
      out.push(action);
    }
    return out;
  }
}

function codeOf(d: vscode.Diagnostic): string | undefined {
  const c = d.code;
  if (typeof c === 'string') return c;
  if (typeof c === 'object' && c !== null && typeof c.value === 'string') return c.value;
  return undefined;
}

/** Write `text` to `target` atomically: a temporary file beside it, then a rename over it. */
async function writeAtomically(target: vscode.Uri, text: string): Promise<void> {
  const tmp = target.with({ path: `${target.path}.${process.pid}.tmp` });
  try {
    await vscode.workspace.fs.writeFile(tmp, new TextEncoder().encode(text));
    await vscode.workspace.fs.rename(tmp, target, { overwrite: true });
  } catch (e) {
    try {
      await vscode.workspace.fs.delete(tmp);
    } catch {
      // nothing left behind to remove
    }
    throw e;
  }
}

/** Create the mapping file `map` (a skeleton validated by the schema) unless it exists, and show it. */
export async function createMappingFile(map: vscode.Uri): Promise<void> {
  let exists = true;
  try {
    await vscode.workspace.fs.stat(map);
  } catch {
    exists = false;
  }
  if (!exists) {
    try {
      await writeAtomically(map, `${JSON.stringify({ version: 1, columns: {} }, null, 2)}\n`);
    } catch (e) {
      void vscode.window.showErrorMessage(`Residuum: cannot write ${map.fsPath}: ${e instanceof Error ? e.message : String(e)}`);
      return;
    }
  }
  await vscode.commands.executeCommand('vscode.open', map);
}

/** Add `column` to the mapping file `map` atomically and show it; a plain message when that is not possible. */
export async function addColumnToMappingFile(map: vscode.Uri, column: string): Promise<void> {
  let text: string | undefined;
  try {
    text = new TextDecoder().decode(await vscode.workspace.fs.readFile(map));
  } catch (e) {
    if (!(e instanceof vscode.FileSystemError) || e.code !== 'FileNotFound') {
      void vscode.window.showErrorMessage(`Residuum: cannot read ${map.fsPath}: ${e instanceof Error ? e.message : String(e)}`);
      return;
    }
  }
  const edit = addColumnToMapping(text, column);
  if (!edit.ok) {
    void vscode.window.showErrorMessage(`Residuum: ${map.fsPath}: ${edit.reason}`);
    return;
  }
  if (edit.added) {
    try {
      await writeAtomically(map, edit.text);
    } catch (e) {
      void vscode.window.showErrorMessage(`Residuum: cannot write ${map.fsPath}: ${e instanceof Error ? e.message : String(e)}`);
      return;
    }
  }
  const line = edit.text.split('\n').findIndex((l) => l.includes(JSON.stringify(column)));
  await vscode.commands.executeCommand('vscode.open', map, {
    selection: new vscode.Range(Math.max(0, line), 0, Math.max(0, line), Number.MAX_SAFE_INTEGER),
    viewColumn: vscode.ViewColumn.Active,
  } satisfies vscode.TextDocumentShowOptions);
}

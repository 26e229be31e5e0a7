/**
 * The read-only custom editor (`residuum.logView`, priority `option`): "Reopen Editor With…" shows a log's analysis
 * in place of its text. A log is never edited and big logs cannot become TextDocuments, hence the read-only provider.
 */
import * as vscode from 'vscode';
import type { PanelManager } from './panels';

/** The custom editor's view type. */
export const LOG_VIEW_TYPE = 'residuum.logView';

/** Opens logs as analysis panels inside the editor area. */
export class LogViewProvider implements vscode.CustomReadonlyEditorProvider<vscode.CustomDocument> {
  constructor(private readonly manager: PanelManager) {}

  /** A document is just the log's URI: the panel reads the file itself (in a worker). */
  openCustomDocument(uri: vscode.Uri): vscode.CustomDocument {
    return { uri, dispose: () => undefined };
  }

  /** Attach the analysis panel to the editor's webview. */
  resolveCustomEditor(document: vscode.CustomDocument, webviewPanel: vscode.WebviewPanel): void {
    this.manager.attachEditor(document.uri, webviewPanel);
  }
}

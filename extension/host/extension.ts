/**
 * Extension entry: registers the commands, the analysis panel (with its serializer), the read-only custom editor,
 * the Problems collection, the status-bar item, the mapping quick fix and the mapping schema's settings; returns the
 * API used by in-host tests. This folder is the only importer of `vscode`.
 */
import * as path from 'node:path';
import * as vscode from 'vscode';
import type { WorstEntry } from '../core/report';
import { LOG_VIEW_TYPE, LogViewProvider } from './customEditor';
import { ADD_COLUMN_COMMAND, MappingFixProvider, addColumnToMappingFile, createMappingFile } from './mappingFix';
import { PANEL_VIEW_TYPE } from './panel';
import { NotesController } from './notes';
import { PanelManager } from './panels';
import { runSelfTestIfRequested } from './selfTest';
import { registerExportCommands } from './exportCommands';

/** What `activate` returns (for in-host tests and other extensions). */
export interface ResiduumApi {
  /** Open (or reveal) the analysis panel of a log; settles when its first analysis is done. */
  openLog(uri: vscode.Uri): Promise<void>;
  /** Worst entries and findings count of the log's panel, once analysed. */
  getPanelState(uri: vscode.Uri): { worst: WorstEntry[]; findings: number } | undefined;
}

/** File extensions the open commands accept. */
const LOG_EXTENSIONS = ['csv', 'jsonl', 'ndjson', 'json'];

/** Path of the bundled demo log inside the extension. */
const DEMO_LOG = ['demo', 'warehouse-flight.csv'];

/** Activate: register everything and return the API. */
export function activate(context: vscode.ExtensionContext): ResiduumApi {
  const output = vscode.window.createOutputChannel('Residuum', { log: true });
  const diagnostics = vscode.languages.createDiagnosticCollection('residuum');
  const status = vscode.window.createStatusBarItem('residuum.summary', vscode.StatusBarAlignment.Right, 100);
  status.name = 'Residuum consistency';
  const manager = new PanelManager(context.extensionUri, output, diagnostics, status, context.workspaceState);

  const open = async (uri: vscode.Uri): Promise<void> => {
    await manager.open(uri).loaded;
  };

  context.subscriptions.push(
    output,
    diagnostics,
    status,
    manager,
    vscode.commands.registerCommand('residuum.openAnalysis', async (arg?: unknown) => {
      const uri = arg instanceof vscode.Uri ? arg : await pickLog();
      if (uri) await open(uri);
    }),
    vscode.commands.registerCommand('residuum.openDemo', async () => {
      const demo = vscode.Uri.joinPath(context.extensionUri, ...DEMO_LOG);
      try {
        await vscode.workspace.fs.stat(demo);
      } catch {
        void vscode.window.showErrorMessage(`Residuum: the demo log is missing from this installation (${demo.fsPath}).`);
        return;
      }
      await open(demo);
    }),
    vscode.commands.registerCommand('residuum.nextWorst', () => stepWorst(manager, 1)),
    vscode.commands.registerCommand('residuum.previousWorst', () => stepWorst(manager, -1)),
    vscode.commands.registerCommand('residuum.createMapping', async (arg?: unknown) => {
      const active = vscode.window.activeTextEditor?.document.uri;
      const isLog = (u: vscode.Uri | undefined): u is vscode.Uri => !!u && u.scheme === 'file' && LOG_EXTENSIONS.some((e) => u.path.toLowerCase().endsWith(`.${e}`)) && !u.path.endsWith('.map.json');
      const log = arg instanceof vscode.Uri ? arg : isLog(active) ? active : manager.current()?.uri ?? (await pickLog());
      if (log) await createMappingFile(mappingFileFor(log));
    }),
    vscode.commands.registerCommand(ADD_COLUMN_COMMAND, (map: unknown, column: unknown) => {
      if (map instanceof vscode.Uri && typeof column === 'string') return addColumnToMappingFile(map, column);
      output.warn(`${ADD_COLUMN_COMMAND}: ignored a call without a mapping URI and a column name`);
      return undefined;
    }),
    vscode.window.registerWebviewPanelSerializer(PANEL_VIEW_TYPE, manager),
    vscode.window.registerCustomEditorProvider(LOG_VIEW_TYPE, new LogViewProvider(manager), { supportsMultipleEditorsPerDocument: true }),
    vscode.languages.registerCodeActionsProvider(
      LOG_EXTENSIONS.map((ext) => ({ scheme: 'file', pattern: `**/*.${ext}` })),
      new MappingFixProvider(manager.unknownColumns, (log) => mappingFileFor(log)),
      { providedCodeActionKinds: MappingFixProvider.providedCodeActionKinds },
    ),
    vscode.workspace.onDidChangeConfiguration((e) => manager.reconfigure(e)),
    new NotesController(manager, output),
    registerExportCommands(manager, output),
  );

  void runSelfTestIfRequested(context);

  return {
    openLog: open,
    getPanelState: (uri) => manager.panelState(uri),
  };
}

/** Nothing to do: every resource is in `context.subscriptions`. */
export function deactivate(): void {}

async function pickLog(): Promise<vscode.Uri | undefined> {
  const active = vscode.window.activeTextEditor?.document.uri;
  const picked = await vscode.window.showOpenDialog({
    canSelectMany: false,
    openLabel: 'Analyse',
    title: 'Residuum: choose an estimator log',
    defaultUri: active?.scheme === 'file' ? active : vscode.workspace.workspaceFolders?.[0]?.uri,
    filters: { 'Estimator logs': LOG_EXTENSIONS, 'All files': ['*'] },
  });
  return picked?.[0];
}

async function stepWorst(manager: PanelManager, direction: 1 | -1): Promise<void> {
  const panel = manager.current();
  if (!panel) {
    void vscode.window.showInformationMessage('Residuum: open a log analysis first (Residuum: Open Log Analysis).');
    return;
  }
  await panel.stepWorst(direction);
}

/** The mapping file of a log: `residuum.mapping.file` when set (relative to the workspace folder), else `<log>.map.json`. */
function mappingFileFor(log: vscode.Uri): vscode.Uri {
  const configured = vscode.workspace.getConfiguration('residuum', log).get<string>('mapping.file');
  if (typeof configured === 'string' && configured.trim() !== '') {
    const m = configured.trim();
    if (path.isAbsolute(m)) return vscode.Uri.file(m);
    const folder = vscode.workspace.getWorkspaceFolder(log);
    return folder ? vscode.Uri.joinPath(folder.uri, m) : vscode.Uri.file(path.resolve(path.dirname(log.fsPath), m));
  }
  return log.with({ path: `${log.path}.map.json` });
}

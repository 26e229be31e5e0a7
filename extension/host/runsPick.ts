/**
 * Choosing the runs of a comparison or a Monte Carlo check: the open dialogs, and the expansion of a folder into
 * the logs it holds (through the workspace file system, sorted by name). Only local files are analysed.
 */
import * as vscode from 'vscode';
import { isRunLog } from './runsMessages';

/** Log extensions offered by the dialogs. */
const LOG_FILTERS = { 'Estimator logs': ['csv', 'jsonl', 'ndjson', 'json'], 'All files': ['*'] };

/** The URIs of the explorer's selection passed to a context-menu command, else those given directly. */
export function urisOfArgs(args: readonly unknown[]): vscode.Uri[] {
  // From the explorer: (clicked, all selected); from the palette or an API call: URIs or nothing.
  const given = Array.isArray(args[1]) ? (args[1] as unknown[]) : Array.isArray(args[0]) ? (args[0] as unknown[]) : args;
  return given.filter((a): a is vscode.Uri => a instanceof vscode.Uri);
}

/** Ask for one or more logs to compare with `base` (the dialog starts in its folder). */
export async function pickCompareRuns(base: vscode.Uri | undefined): Promise<vscode.Uri[]> {
  const picked = await vscode.window.showOpenDialog({
    canSelectMany: true,
    openLabel: 'Compare',
    title: 'Residuum: choose the runs to compare with this log',
    ...(base ? { defaultUri: vscode.Uri.joinPath(base, '..') } : {}),
    filters: LOG_FILTERS,
  });
  return picked ?? [];
}

/** Ask for the runs of a Monte Carlo check: first whether a folder or several logs, then the dialog for that. */
export async function pickMonteCarloRuns(base: vscode.Uri | undefined): Promise<vscode.Uri[]> {
  const kind = await vscode.window.showQuickPick(
    [
      { label: 'A folder of runs', description: 'every log in it is one run of the scenario', folder: true },
      { label: 'Several logs', description: 'each log is one run of the scenario', folder: false },
    ],
    { title: 'Residuum: Monte Carlo runs of one scenario' },
  );
  if (!kind) return [];
  const picked = await vscode.window.showOpenDialog({
    canSelectMany: !kind.folder,
    canSelectFiles: !kind.folder,
    canSelectFolders: kind.folder,
    openLabel: 'Check runs',
    title: kind.folder ? 'Residuum: choose the folder of runs' : 'Residuum: choose two or more logs of one scenario',
    ...(base ? { defaultUri: vscode.Uri.joinPath(base, '..') } : {}),
    ...(kind.folder ? {} : { filters: LOG_FILTERS }),
  });
  return picked ?? [];
}

/** Files and folders expanded to the logs they stand for (a folder: its logs by name; no recursion), de-duplicated. */
export async function expandRunUris(uris: readonly vscode.Uri[]): Promise<vscode.Uri[]> {
  const out: vscode.Uri[] = [];
  const seen = new Set<string>();
  const add = (u: vscode.Uri): void => {
    if (seen.has(u.toString())) return;
    seen.add(u.toString());
    out.push(u);
  };
  for (const u of uris) {
    let type: vscode.FileType | undefined;
    try {
      type = (await vscode.workspace.fs.stat(u)).type;
    } catch {
      add(u); // the analysis names the missing file
      continue;
    }
    if (!(type & vscode.FileType.Directory)) {
      add(u);
      continue;
    }
    const entries = await vscode.workspace.fs.readDirectory(u);
    const names = entries.filter(([n, t]) => !(t & vscode.FileType.Directory) && isRunLog(n)).map(([n]) => n).sort();
    for (const n of names) add(vscode.Uri.joinPath(u, n));
  }
  return out;
}

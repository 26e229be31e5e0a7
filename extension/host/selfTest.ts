/**
 * In-host checks against the real `vscode` API, run only when the environment asks for them.
 *
 * Environment variables (given to the `code-server` process; they reach the remote extension host):
 * - `RESIDUUM_SELFTEST_OUT=<file>`: run the checks below and write `<JSON results>\n<N passed, N failed>\n` to the file
 *   (written to `<file>.tmp` first, then renamed, so a reader never sees half a file); `<file>.started` is written
 *   when the checks begin.
 * - `RESIDUUM_SELFTEST_LOG=<file>`: the log the checks open; default `warehouse-flight.csv` in the first workspace folder.
 * - `RESIDUUM_OPEN_ON_START=<file>`: open this log's analysis once the extension is active (used by `npm start`).
 *   Relative paths resolve against the first workspace folder.
 *
 * Conventions: `WorstEntry.line` is 1-based (log conventions, "Lines"); VS Code positions are 0-based, so the
 * worst epoch at line L is selected at `selection.active.line === L - 1`.
 *
 * The checks use the extension's exported API, which exists only after `activate` returns, so
 * `runSelfTestIfRequested` starts them in the background and resolves at once; activation is never delayed.
 */
import * as vscode from 'vscode';

/** The part of a `WorstEntry` (core/report.ts) the checks read. */
interface WorstLine {
  line: number;
  t: number;
}

/** The API `activate` returns (structural, so this file does not depend on extension.ts). */
interface ResiduumApi {
  openLog(uri: vscode.Uri): Promise<void>;
  getPanelState(uri: vscode.Uri): { worst: WorstLine[]; findings: number } | undefined;
}

/** One check's outcome. */
interface CheckResult {
  name: string;
  ok: boolean;
  detail: string;
  ms: number;
}

/** Commands the manifest contributes and the host must register. */
const REQUIRED_COMMANDS = ['residuum.openAnalysis', 'residuum.openDemo', 'residuum.nextWorst', 'residuum.previousWorst'];
/** Cap on diagnostics per log when the manifest names none (the report contract caps `worst` at 100). */
const FALLBACK_DIAGNOSTICS_CAP = 100;

function env(name: string): string | undefined {
  // `process` is absent in the web worker host; the checks only run in the Node host.
  if (typeof process === 'undefined') return undefined;
  const v = process.env[name];
  return v && v.length > 0 ? v : undefined;
}

function resolveLogUri(p: string): vscode.Uri {
  if (p.startsWith('/')) return vscode.Uri.file(p);
  const folder = vscode.workspace.workspaceFolders?.[0];
  if (!folder) return vscode.Uri.file(p);
  return vscode.Uri.joinPath(folder.uri, p);
}

function sleep(ms: number): Promise<void> {
  return new Promise((resolve) => setTimeout(resolve, ms));
}

/** Polls `probe` every 100 ms until it returns a value other than undefined, or the time runs out. */
async function waitFor<T>(probe: () => T | undefined, timeout_ms: number): Promise<T | undefined> {
  const end = Date.now() + timeout_ms;
  for (;;) {
    const v = probe();
    if (v !== undefined) return v;
    if (Date.now() > end) return undefined;
    await sleep(100);
  }
}

function isApi(x: unknown): x is ResiduumApi {
  if (typeof x !== 'object' || x === null) return false;
  const o = x as Record<string, unknown>;
  return typeof o.openLog === 'function' && typeof o.getPanelState === 'function';
}

async function apiOf(extensionId: string): Promise<ResiduumApi> {
  const ext = await waitFor(() => {
    const e = vscode.extensions.getExtension(extensionId);
    return e?.isActive ? e : undefined;
  }, 30_000);
  if (!ext) throw new Error(`extension ${extensionId} did not become active within 30 s`);
  const api: unknown = ext.exports;
  if (!isApi(api)) throw new Error(`extension ${extensionId} exports no { openLog, getPanelState } API`);
  return api;
}

/** Runs one named check, timing it and turning a throw into a failed result. */
async function check(results: CheckResult[], name: string, body: () => Promise<string>): Promise<void> {
  const t0 = Date.now();
  try {
    const detail = await body();
    results.push({ name, ok: true, detail, ms: Date.now() - t0 });
  } catch (e) {
    results.push({ name, ok: false, detail: e instanceof Error ? e.message : String(e), ms: Date.now() - t0 });
  }
}

function assert(cond: boolean, message: string): asserts cond {
  if (!cond) throw new Error(message);
}

/** The diagnostics cap: the default of a contributed `residuum.*` setting about diagnostics and a maximum. */
function diagnosticsCap(packageJSON: unknown): { key: string | undefined; cap: number } {
  const props = contributedSettings(packageJSON);
  for (const [key, spec] of Object.entries(props)) {
    if (/diagnostic|problem/i.test(key) && /max|cap|limit|count/i.test(key)) {
      const configured = vscode.workspace.getConfiguration().get<number>(key);
      const cap = typeof configured === 'number' ? configured : typeof spec.default === 'number' ? spec.default : undefined;
      if (cap !== undefined) return { key, cap };
    }
  }
  return { key: undefined, cap: FALLBACK_DIAGNOSTICS_CAP };
}

/** `contributes.configuration` properties from the manifest (object or array form). */
function contributedSettings(packageJSON: unknown): Record<string, { default?: unknown }> {
  const contributes = (packageJSON as { contributes?: { configuration?: unknown } } | undefined)?.contributes;
  const conf = contributes?.configuration;
  const sections = Array.isArray(conf) ? conf : conf ? [conf] : [];
  const out: Record<string, { default?: unknown }> = {};
  for (const s of sections) {
    const props = (s as { properties?: Record<string, { default?: unknown }> }).properties;
    if (props) Object.assign(out, props);
  }
  return out;
}

async function waitForSelectionLine(uri: vscode.Uri, line0: number, timeout_ms: number): Promise<number | undefined> {
  const hit = await waitFor(() => {
    const ed = vscode.window.activeTextEditor;
    if (!ed || ed.document.uri.toString() !== uri.toString()) return undefined;
    return ed.selection.active.line === line0 ? line0 : undefined;
  }, timeout_ms);
  return hit;
}

function activeSelectionDescription(): string {
  const ed = vscode.window.activeTextEditor;
  if (!ed) return 'no active text editor';
  return `active editor ${ed.document.uri.fsPath} at 0-based line ${ed.selection.active.line}`;
}

/** Runs every check and returns the results (never throws). */
async function runChecks(context: vscode.ExtensionContext, logPath: string): Promise<CheckResult[]> {
  const results: CheckResult[] = [];
  const logUri = resolveLogUri(logPath);
  let api: ResiduumApi | undefined;

  await check(results, 'commands registered', async () => {
    const all = new Set(await vscode.commands.getCommands(true));
    const missing = REQUIRED_COMMANDS.filter((c) => !all.has(c));
    assert(missing.length === 0, `not registered: ${missing.join(', ')}`);
    return `${REQUIRED_COMMANDS.length} commands registered`;
  });

  await check(results, 'configuration defaults present', async () => {
    const props = contributedSettings(context.extension.packageJSON);
    const keys = Object.keys(props);
    assert(keys.length > 0, 'the manifest contributes no configuration');
    const wrong: string[] = [];
    for (const key of keys) {
      if (!key.startsWith('residuum.')) wrong.push(`${key}: not under residuum.`);
      const inspected = vscode.workspace.getConfiguration().inspect(key);
      const declared = props[key]?.default;
      if (declared === undefined) continue;
      if (JSON.stringify(inspected?.defaultValue) !== JSON.stringify(declared)) {
        wrong.push(`${key}: host default ${JSON.stringify(inspected?.defaultValue)} != manifest ${JSON.stringify(declared)}`);
      }
    }
    assert(wrong.length === 0, wrong.join('; '));
    return `${keys.length} settings with their manifest defaults`;
  });

  await check(results, 'extension API exported', async () => {
    api = await apiOf(context.extension.id);
    return 'openLog and getPanelState present';
  });

  let worst: WorstLine[] = [];
  await check(results, 'open the log analysis via the API', async () => {
    assert(api !== undefined, 'no API');
    const a = api;
    await a.openLog(logUri);
    const state = await waitFor(() => {
      const s = a.getPanelState(logUri);
      return s && s.worst.length > 0 ? s : undefined;
    }, 60_000);
    assert(state !== undefined, `getPanelState(${logUri.fsPath}) gave no worst epochs within 60 s`);
    worst = state.worst;
    assert(worst.every((w) => Number.isInteger(w.line) && w.line >= 1), 'a worst entry has a line that is not a 1-based integer');
    return `${state.worst.length} worst epochs, ${state.findings} findings`;
  });

  await check(results, 'diagnostics on the log within the cap', async () => {
    const { key, cap } = diagnosticsCap(context.extension.packageJSON);
    const diags = await waitFor(() => {
      const d = vscode.languages.getDiagnostics(logUri);
      return d.length > 0 ? d : undefined;
    }, 30_000);
    assert(diags !== undefined, `no diagnostics on ${logUri.fsPath} within 30 s`);
    assert(diags.length <= cap, `${diags.length} diagnostics exceed the cap ${cap} (${key ?? 'fallback'})`);
    const bad = diags.filter((d) => d.severity === vscode.DiagnosticSeverity.Error);
    assert(bad.length === 0, `${bad.length} diagnostics have Error severity (expected Warning/Information)`);
    return `${diags.length} diagnostics, cap ${cap} (${key ?? 'fallback'})`;
  });

  await check(results, 'next worst epoch selects its line', async () => {
    assert(worst.length > 0, 'no worst epochs to jump to');
    const first = worst[0]!;
    await vscode.commands.executeCommand('residuum.nextWorst');
    const hit = await waitForSelectionLine(logUri, first.line - 1, 15_000);
    assert(hit !== undefined, `expected 0-based line ${first.line - 1} (worst epoch t=${first.t}); ${activeSelectionDescription()}`);
    return `selection on line ${first.line} (1-based), t=${first.t}`;
  });

  await check(results, 'previous worst epoch returns to the worst', async () => {
    assert(worst.length >= 2, `need 2 worst epochs, have ${worst.length}`);
    const second = worst[1]!;
    await vscode.commands.executeCommand('residuum.nextWorst');
    const onSecond = await waitForSelectionLine(logUri, second.line - 1, 15_000);
    assert(onSecond !== undefined, `second nextWorst: expected 0-based line ${second.line - 1}; ${activeSelectionDescription()}`);
    await vscode.commands.executeCommand('residuum.previousWorst');
    const back = await waitForSelectionLine(logUri, worst[0]!.line - 1, 15_000);
    assert(back !== undefined, `previousWorst: expected 0-based line ${worst[0]!.line - 1}; ${activeSelectionDescription()}`);
    return `line ${second.line} then back to ${worst[0]!.line}`;
  });

  return results;
}

async function writeResults(out: string, results: CheckResult[]): Promise<void> {
  const passed = results.filter((r) => r.ok).length;
  const failed = results.length - passed;
  const text = `${JSON.stringify({ passed, failed, results }, null, 2)}\n${passed} passed, ${failed} failed\n`;
  const target = vscode.Uri.file(out);
  const tmp = vscode.Uri.file(`${out}.tmp`);
  await vscode.workspace.fs.writeFile(tmp, new TextEncoder().encode(text));
  await vscode.workspace.fs.rename(tmp, target, { overwrite: true });
}

async function openOnStart(context: vscode.ExtensionContext, logPath: string): Promise<void> {
  try {
    const api = await apiOf(context.extension.id);
    await api.openLog(resolveLogUri(logPath));
  } catch (e) {
    void vscode.window.showErrorMessage(`Residuum: could not open ${logPath}: ${e instanceof Error ? e.message : String(e)}`);
  }
}

/**
 * Called from `activate`. When `RESIDUUM_SELFTEST_OUT` is set, runs the in-host checks in the background and writes
 * their results there; when `RESIDUUM_OPEN_ON_START` is set, opens that log's analysis. Resolves at once either way.
 */
export async function runSelfTestIfRequested(context: vscode.ExtensionContext): Promise<void> {
  const out = env('RESIDUUM_SELFTEST_OUT');
  const openPath = env('RESIDUUM_OPEN_ON_START');
  if (openPath && !out) void openOnStart(context, openPath);
  if (!out) return;
  const logPath = env('RESIDUUM_SELFTEST_LOG') ?? 'warehouse-flight.csv';
  void (async () => {
    // A marker so a runner can tell the checks have begun (and must not touch the editor meanwhile).
    await vscode.workspace.fs.writeFile(vscode.Uri.file(`${out}.started`), new TextEncoder().encode(`${new Date().toISOString()}\n`)).then(
      () => undefined,
      () => undefined,
    );
    let results: CheckResult[];
    try {
      results = await runChecks(context, logPath);
    } catch (e) {
      results = [{ name: 'self test', ok: false, detail: e instanceof Error ? e.message : String(e), ms: 0 }];
    }
    try {
      await writeResults(out, results);
    } catch (e) {
      void vscode.window.showErrorMessage(`Residuum self test: cannot write ${out}: ${e instanceof Error ? e.message : String(e)}`);
    }
  })();
}

/**
 * Links between the log and the code that writes it, both ways:
 * - "Go to the code that writes this" (from the panel and its findings): the log's `# source: path:line` line is
 *   honoured first; otherwise the workspace's source files are listed with `workspace.findFiles` (honouring
 *   `files.exclude` and `search.exclude`; the text-search API is still proposed), read, and the column's literal
 *   name searched and ranked by core/notes/sourceLinks.ts (a logging call or CSV header string first).
 * - A CodeLens above each line of the estimator's source that writes a known channel column, with that channel's
 *   headline figures from each analysed log and a command that opens the panel on the channel. It is refreshed when
 *   a log is analysed again and can be switched off (`residuum.codeLens.enabled`).
 */
import * as fs from 'node:fs';
import * as path from 'node:path';
import * as vscode from 'vscode';
import type { Report } from '../core/report';
import {
  channelOfColumn,
  findMentions,
  headerColumns,
  isWrite,
  parseSourceMeta,
  pathSuffixes,
  rankHits,
  type SourceHit,
  type SourceRef,
} from '../core/notes/sourceLinks';

/** Command of the CodeLens: open the panel of a log on one channel (arguments: log URI string, channel name). */
export const SHOW_CHANNEL_COMMAND = 'residuum.showChannel';

/** Source files searched for column names. */
const SOURCE_GLOB = '**/*.{c,cc,cpp,cxx,h,hh,hpp,hxx,cu,py,pyx,rs,go,java,kt,scala,m,mm,swift,js,mjs,cjs,ts,jl,cs,rb,lua,r,R,f90}';
/** Languages that get the CodeLens. */
export const CODELENS_LANGUAGES = ['c', 'cpp', 'cuda-cpp', 'python', 'rust', 'go', 'java', 'kotlin', 'scala', 'objective-c', 'objective-cpp', 'swift', 'javascript', 'typescript', 'julia', 'csharp', 'ruby', 'lua', 'r', 'fortran', 'matlab'];
/** Most files read in one search, and largest file read, bytes. */
const MAX_FILES = 5000;
const MAX_FILE_BYTES = 2 * 1024 * 1024;
/** Bytes of a log read for its header and metadata. */
const HEAD_BYTES = 64 * 1024;

/** What the links know of one analysed log. */
interface LogInfo {
  uri: vscode.Uri;
  report?: Report;
  columns: string[];
  source?: SourceRef;
}

/** A place to jump to, with its label for a pick list. */
interface Candidate {
  uri: vscode.Uri;
  line: number;
  column: number;
  label: string;
  detail: string;
  fromSource: boolean;
  kind?: SourceHit['kind'];
}

/** Read the first bytes of a file as text ('' when unreadable). */
async function readHead(file: string): Promise<string> {
  try {
    const handle = await fs.promises.open(file, 'r');
    try {
      const buf = Buffer.alloc(HEAD_BYTES);
      const { bytesRead } = await handle.read(buf, 0, HEAD_BYTES, 0);
      return buf.subarray(0, bytesRead).toString('utf8');
    } finally {
      await handle.close();
    }
  } catch {
    return '';
  }
}

/** The `files.exclude` and `search.exclude` patterns that are switched on, as one glob (undefined when none). */
export function excludeGlob(scope?: vscode.Uri): string | undefined {
  const keys = new Set<string>();
  for (const section of ['files', 'search']) {
    const map = vscode.workspace.getConfiguration(section, scope).get<Record<string, unknown>>('exclude') ?? {};
    for (const [k, v] of Object.entries(map)) if (v === true) keys.add(k);
  }
  return keys.size ? `{${[...keys].join(',')}}` : undefined;
}

/** The log-to-code links and the CodeLens provider. */
export class CodeLinks implements vscode.CodeLensProvider, vscode.Disposable {
  private readonly changed = new vscode.EventEmitter<void>();
  /** Fires when the lenses should be asked for again. */
  readonly onDidChangeCodeLenses = this.changed.event;
  private readonly logs = new Map<string, LogInfo>();

  constructor(private readonly output: vscode.LogOutputChannel) {}

  /** A log was analysed (again): remember its channels and columns, refresh the lenses. */
  async analysed(uri: vscode.Uri, report: Report | undefined): Promise<void> {
    const info = await this.load(uri);
    info.report = report;
    this.logs.set(uri.toString(), info);
    this.changed.fire();
  }

  /** Settings changed: refresh the lenses. */
  refresh(): void {
    this.changed.fire();
  }

  dispose(): void {
    this.changed.dispose();
  }

  private async load(uri: vscode.Uri): Promise<LogInfo> {
    if (uri.scheme !== 'file') return { uri, columns: [] };
    const head = await readHead(uri.fsPath);
    const meta = /^#\s*source\s*:\s*(.+?)\s*$/im.exec(head);
    const source = meta ? parseSourceMeta(meta[1]) : undefined;
    return { uri, columns: headerColumns(head), ...(source ? { source } : {}) };
  }

  /** CodeLenses of a source document: one per line that writes a column of a channel of an analysed log. */
  provideCodeLenses(doc: vscode.TextDocument): vscode.CodeLens[] {
    if (!vscode.workspace.getConfiguration('residuum', doc.uri).get<boolean>('codeLens.enabled', true)) return [];
    const lenses: vscode.CodeLens[] = [];
    const text = doc.getText();
    for (const info of this.logs.values()) {
      const report = info.report;
      if (!report || report.channels.length === 0) continue;
      const channels = report.channels.map((c) => c.name);
      const columnChannel = new Map<string, string>();
      for (const c of info.columns) {
        const ch = channelOfColumn(c, channels);
        if (ch) columnChannel.set(c, ch);
      }
      if (columnChannel.size === 0) continue;
      const seen = new Set<string>();
      for (const hit of findMentions(text, doc.uri.toString(), [...columnChannel.keys()])) {
        if (!isWrite(hit)) continue;
        const channel = columnChannel.get(hit.name) as string;
        const key = `${hit.line}/${channel}`;
        if (seen.has(key)) continue;
        seen.add(key);
        const range = new vscode.Range(hit.line - 1, 0, hit.line - 1, 0);
        lenses.push(new vscode.CodeLens(range, { title: lensTitle(report, channel, info.uri), tooltip: `Open the Residuum analysis of ${path.posix.basename(info.uri.path)} on channel ${channel}`, command: SHOW_CHANNEL_COMMAND, arguments: [info.uri.toString(), channel] }));
      }
    }
    return lenses;
  }

  /** Jump to the code that writes `name` (a channel or a column) of the log `logUri`. */
  async goto(logUri: vscode.Uri, name: string): Promise<void> {
    const info = this.logs.get(logUri.toString()) ?? (await this.load(logUri));
    const channels = info.report?.channels.map((c) => c.name) ?? [];
    let names = channels.includes(name) ? info.columns.filter((c) => channelOfColumn(c, channels) === name) : [name];
    if (names.length === 0) names = [name];
    const candidates = await vscode.window.withProgress({ location: vscode.ProgressLocation.Window, title: `Residuum: searching the source for ${name}` }, (_p, token) => this.candidates(info, names, token));
    if (candidates.length === 0) {
      void vscode.window.showInformationMessage(`Residuum: no source file in this workspace mentions ${names.join(', ')} (searched ${SOURCE_GLOB.slice(5)}, honouring files.exclude and search.exclude).`);
      return;
    }
    const best = candidates[0];
    const clear = best.fromSource || (best.kind === 'log-call' && candidates[1]?.kind !== 'log-call');
    let chosen: Candidate | undefined = best;
    if (!clear) {
      const pick = await vscode.window.showQuickPick(
        candidates.slice(0, 50).map((c) => ({ label: c.label, detail: c.detail, candidate: c })),
        { title: `Residuum: code that writes ${name}`, matchOnDetail: true },
      );
      chosen = pick?.candidate;
    }
    if (!chosen) return;
    const pos = new vscode.Position(chosen.line - 1, Math.max(0, chosen.column - 1));
    await vscode.window.showTextDocument(chosen.uri, { selection: new vscode.Range(pos, pos), viewColumn: vscode.ViewColumn.One, preview: true });
  }

  /** Ranked places for `names`: the `# source:` file first (its hits nearest the named line, or the line itself). */
  private async candidates(info: LogInfo, names: string[], token: vscode.CancellationToken): Promise<Candidate[]> {
    const sourceUri = info.source ? await this.resolveSource(info.source, info.uri) : undefined;
    const hits: SourceHit[] = [];
    const files = await vscode.workspace.findFiles(SOURCE_GLOB, excludeGlob(info.uri), MAX_FILES, token);
    if (sourceUri && !files.some((f) => f.toString() === sourceUri.toString())) files.push(sourceUri);
    for (let i = 0; i < files.length && !token.isCancellationRequested; i += 16) {
      await Promise.all(
        files.slice(i, i + 16).map(async (uri) => {
          try {
            const bytes = await vscode.workspace.fs.readFile(uri);
            if (bytes.byteLength > MAX_FILE_BYTES) return;
            hits.push(...findMentions(new TextDecoder().decode(bytes), uri.toString(), names));
          } catch (e) {
            this.output.warn(`code links: cannot read ${uri.fsPath}: ${(e as Error).message}`);
          }
        }),
      );
    }
    const toCandidate = (h: SourceHit, fromSource: boolean): Candidate => {
      const uri = vscode.Uri.parse(h.file);
      return { uri, line: h.line, column: h.column, label: `${vscode.workspace.asRelativePath(uri)}:${h.line}`, detail: `${h.kind}: ${h.preview}`, fromSource, kind: h.kind };
    };
    const sourceKey = sourceUri?.toString();
    const inSource = rankHits(hits.filter((h) => h.file === sourceKey && h.kind !== 'comment'), sourceKey ? { file: sourceKey, line: info.source?.line } : undefined);
    const rest = rankHits(hits.filter((h) => !(h.file === sourceKey && h.kind !== 'comment')));
    const out = [...inSource.map((h) => toCandidate(h, true)), ...rest.map((h) => toCandidate(h, false))];
    if (sourceUri && inSource.length === 0 && info.source?.line) {
      out.unshift({ uri: sourceUri, line: info.source.line, column: info.source.column ?? 1, label: `${vscode.workspace.asRelativePath(sourceUri)}:${info.source.line}`, detail: 'named by the log\'s "# source:" line', fromSource: true });
    }
    return out;
  }

  /** The workspace file a `# source:` path names: absolute, relative to the log or a workspace folder, or by suffix. */
  async resolveSource(ref: SourceRef, logUri: vscode.Uri): Promise<vscode.Uri | undefined> {
    const exists = (p: string): boolean => {
      try {
        return fs.statSync(p).isFile();
      } catch {
        return false;
      }
    };
    if (path.isAbsolute(ref.path) && exists(ref.path)) return vscode.Uri.file(ref.path);
    const suffixes = pathSuffixes(ref.path);
    const bases = [...(logUri.scheme === 'file' ? [path.dirname(logUri.fsPath)] : []), ...(vscode.workspace.workspaceFolders ?? []).filter((f) => f.uri.scheme === 'file').map((f) => f.uri.fsPath)];
    for (const s of suffixes) for (const b of bases) if (exists(path.join(b, s))) return vscode.Uri.file(path.join(b, s));
    const last = suffixes.at(-1);
    if (!last) return undefined;
    const found = await vscode.workspace.findFiles(`**/${last.replace(/[[\]{}*?!]/g, (c) => `[${c}]`)}`, excludeGlob(logUri), 50);
    let best: vscode.Uri | undefined;
    let bestLen = 0;
    for (const f of found) {
      const p = f.path;
      const len = suffixes.find((s) => p.endsWith(`/${s}`))?.length ?? 0;
      if (len > bestLen) {
        best = f;
        bestLen = len;
      }
    }
    return best;
  }
}

/** The lens title: a channel's headline figures in one line (plain text). */
export function lensTitle(report: Report, channel: string, logUri: vscode.Uri): string {
  const c = report.channels.find((x) => x.name === channel);
  const parts: string[] = [];
  const inside = c?.nis.inside95;
  if (typeof inside === 'number') parts.push(`NIS ${(inside * 100).toFixed(1)}% inside 95% bounds`);
  if (c) parts.push(`${c.outliers} outlier${c.outliers === 1 ? '' : 's'}`);
  const worst = report.worst.filter((w) => w.channel === channel).sort((a, b) => a.p - b.p)[0];
  if (worst) parts.push(`worst NIS ${worst.score.toPrecision(3)} at t = ${worst.t} s`);
  return `$(pulse) ${channel} in ${path.posix.basename(logUri.path)}: ${parts.join(' · ') || 'no NIS figures'}`;
}

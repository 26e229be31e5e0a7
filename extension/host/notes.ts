/**
 * Notes in the editor: comment threads on the log's lines (Comments API), the notes of the panel (list and chart
 * markers, via `notes/*` messages), the commands to add, edit, resolve and delete from each place, and the sidecar
 * `<log>.notes.json` kept in step with other windows and with git (watched; re-read; merged by the store).
 *
 * Placement: notes hold times, never lines. The lines shown here come from a quick index of the log's text
 * (core/notes/lineIndex.ts, for logs up to 32 MB) or, for bigger logs, from the last analysis (`report.notes`).
 * Detached notes (their epoch is gone) are kept and shown on the log's first line as "detached".
 *
 * Text from notes is never markup: comment bodies are MarkdownStrings built with `appendText` (escaped, not trusted,
 * no HTML), labels are plain strings, and the panel sets text with `textContent`.
 */
import * as fs from 'node:fs';
import * as path from 'node:path';
import * as vscode from 'vscode';
import { anchorNotes, type AnchorLog, type AnchoredNote } from '../core/notes/anchor';
import { indexLogText, targetAtLine, type LineTarget } from '../core/notes/lineIndex';
import { newNoteId, normalizeTags, splitTags, type Note, type NoteOp } from '../core/notes/sidecar';
import { confirmResetOps, confirmedResetTimes, unconfirmResetOps, type ResetEvidence } from '../core/notes/resets';
import { NotesStore, notesPathFor } from '../node/notesStore';
import type { NoteInfo, NotesUpdateMessage } from '../protocol';
import { CODELENS_LANGUAGES, CodeLinks, SHOW_CHANNEL_COMMAND } from './codeLinks';
import { notesPanelHooks, type NotesPanelMessage } from './notesPanelHook';
import { globEscape, type AnalysisPanel } from './panel';
import type { PanelManager } from './panels';

/** Comment controller id (menus use it in `commentController == residuum.notes`). */
const CONTROLLER_ID = 'residuum.notes';
/** Largest log indexed in the extension host for placing notes, bytes. */
const MAX_INDEX_BYTES = 32 * 1024 * 1024;
/** File extensions of logs that take notes. */
const LOG_EXTENSIONS = ['.csv', '.jsonl', '.ndjson', '.json'];

/** Whether a URI names a log that can carry notes (not a sidecar or mapping file). */
export function isNotesLog(uri: vscode.Uri): boolean {
  if (uri.scheme !== 'file') return false;
  const p = uri.path.toLowerCase();
  return LOG_EXTENSIONS.some((e) => p.endsWith(e)) && !p.endsWith('.notes.json') && !p.endsWith('.map.json');
}

/** One comment: the note's text, plain, in a MarkdownString that escapes everything. */
class NoteComment implements vscode.Comment {
  body: string | vscode.MarkdownString;
  mode = vscode.CommentMode.Preview;
  author: vscode.CommentAuthorInformation;
  label: string | undefined;
  contextValue = 'residuum.note';
  constructor(
    readonly logKey: string,
    readonly note: AnchoredNote,
  ) {
    this.body = plainBody(note);
    this.author = { name: note.author ?? 'Note' };
    this.label = noteLabel(note);
  }
  /** The text as the user edits it: the note's text and its #tags. */
  editable(): string {
    return [this.note.text, ...this.note.tags.map((t) => `#${t}`)].join(' ').trim();
  }
}

function plainBody(n: Note): vscode.MarkdownString {
  const md = new vscode.MarkdownString(undefined, false);
  md.isTrusted = false;
  md.supportHtml = false;
  md.appendText(n.text === '' ? '(no text)' : n.text);
  if (n.tags.length) md.appendMarkdown('\n\n').appendText(n.tags.map((t) => `#${t}`).join(' '));
  return md;
}

/** A short plain label: where the note is and its state. */
export function noteLabel(n: AnchoredNote): string {
  const where = n.tEnd !== undefined ? `t = ${n.t}–${n.tEnd} s` : `t = ${n.t} s`;
  const on = [n.channel, n.updateId].filter((x) => x !== undefined).join(' ');
  const parts = [where, on, n.finding ? `on ${n.finding}` : '', n.status === 'resolved' ? 'resolved' : '', n.detached ? `detached: ${n.reason ?? 'its epoch is not in this log'}` : ''];
  return parts.filter((p) => p !== '').join(' · ');
}

/** The notes of one log. */
interface LogNotes {
  uri: vscode.Uri;
  store: NotesStore;
  /** Comment threads by note id. */
  threads: Map<string, vscode.CommentThread>;
  watcher: vscode.FileSystemWatcher;
  index?: { stamp: string; log: AnchorLog | undefined };
  /** Why the sidecar cannot be read or written, when it cannot. */
  message?: string;
  /** Id of a note to show expanded on the next render. */
  expand?: string;
  /** Confirmed reset times as last seen (joined); a change re-runs the log's analysis. */
  resetKey?: string;
}

/** A covariance-jump candidate of a report, as the reset commands offer it. */
interface ResetChoice {
  t: number;
  line: number;
  factor: number;
  block: string;
  confirmed: boolean;
  logged: boolean;
}

/** The candidates and confirmed resets of a report (`resets` block, core/resets); empty when absent. */
function resetChoices(report: { readonly [key: string]: unknown } | undefined): { candidates: ResetChoice[]; confirmed: number[] } {
  const b = report?.resets as { candidates?: ResetChoice[]; confirmed?: number[] } | undefined;
  return { candidates: Array.isArray(b?.candidates) ? b.candidates : [], confirmed: Array.isArray(b?.confirmed) ? b.confirmed : [] };
}

/** Notes and code links of the extension (one per window). */
export class NotesController implements vscode.Disposable {
  private readonly comments: vscode.CommentController;
  private readonly logs = new Map<string, LogNotes>();
  private readonly panels = new Set<AnalysisPanel>();
  private readonly readyPanels = new WeakSet<AnalysisPanel>();
  private readonly pendingFocus = new Map<string, string>();
  private readonly threadOf = new WeakMap<vscode.CommentThread, { key: string; id: string }>();
  private readonly disposables: vscode.Disposable[] = [];
  readonly codeLinks: CodeLinks;

  constructor(
    private readonly manager: PanelManager,
    private readonly output: vscode.LogOutputChannel,
  ) {
    this.codeLinks = new CodeLinks(output);
    this.comments = vscode.comments.createCommentController(CONTROLLER_ID, 'Residuum notes');
    this.comments.options = { prompt: 'Add a Residuum note on this epoch', placeHolder: 'What did you find here? Add #tags' };
    this.comments.commentingRangeProvider = {
      provideCommentingRanges: (doc) => (isNotesLog(doc.uri) && doc.lineCount > 0 ? [new vscode.Range(0, 0, doc.lineCount - 1, 0)] : []),
    };
    notesPanelHooks.onMessage = (panel, msg) => void this.onPanelMessage(panel, msg).catch((e) => this.output.error(`notes: ${(e as Error).message}`));
    notesPanelHooks.onAnalysed = (panel) => {
      this.panels.add(panel);
      void this.codeLinks.analysed(panel.uri, panel.report);
      void this.refresh(this.entry(panel.uri));
    };
    notesPanelHooks.onDisposed = (panel) => {
      this.panels.delete(panel);
    };
    this.disposables.push(
      this.comments,
      this.codeLinks,
      vscode.languages.registerCodeLensProvider(CODELENS_LANGUAGES.map((language) => ({ scheme: 'file', language })), this.codeLinks),
      vscode.commands.registerCommand('residuum.notes.addAtLine', (arg?: unknown) => this.addAtLine(arg)),
      vscode.commands.registerCommand('residuum.notes.create', (reply: vscode.CommentReply) => this.createFromReply(reply)),
      vscode.commands.registerCommand('residuum.notes.edit', (c: NoteComment) => this.startEdit(c)),
      vscode.commands.registerCommand('residuum.notes.saveEdit', (c: NoteComment) => this.saveEdit(c)),
      vscode.commands.registerCommand('residuum.notes.cancelEdit', (c: NoteComment) => this.refreshKey(c?.logKey)),
      vscode.commands.registerCommand('residuum.notes.resolve', (t: vscode.CommentThread) => this.onThread(t, (id) => ({ op: 'patch', id, set: { status: 'resolved' } }))),
      vscode.commands.registerCommand('residuum.notes.reopen', (t: vscode.CommentThread) => this.onThread(t, (id) => ({ op: 'patch', id, set: { status: 'open' } }))),
      vscode.commands.registerCommand('residuum.notes.delete', (t: vscode.CommentThread) => this.onThread(t, (id) => ({ op: 'delete', id }))),
      vscode.commands.registerCommand('residuum.notes.goToCode', (arg?: unknown, name?: unknown) => this.goToCodeCommand(arg, name)),
      vscode.commands.registerCommand(SHOW_CHANNEL_COMMAND, (uri: unknown, channel: unknown) => this.showChannel(uri, channel)),
      vscode.commands.registerCommand('residuum.confirmReset', (t?: unknown) => this.confirmResetCommand(t)),
      vscode.commands.registerCommand('residuum.unconfirmReset', (t?: unknown) => this.unconfirmResetCommand(t)),
      vscode.workspace.onDidOpenTextDocument((d) => this.onOpened(d)),
      vscode.workspace.onDidChangeConfiguration((e) => {
        if (e.affectsConfiguration('residuum.codeLens')) this.codeLinks.refresh();
      }),
    );
    for (const d of vscode.workspace.textDocuments) this.onOpened(d);
  }

  dispose(): void {
    notesPanelHooks.onMessage = undefined;
    notesPanelHooks.onAnalysed = undefined;
    notesPanelHooks.onDisposed = undefined;
    for (const l of this.logs.values()) {
      l.watcher.dispose();
      for (const t of l.threads.values()) t.dispose();
    }
    this.logs.clear();
    for (const d of this.disposables.splice(0)) d.dispose();
  }

  /** Notes of a log as placed now (for in-host tests and the self test). */
  async placedNotes(uri: vscode.Uri): Promise<AnchoredNote[]> {
    return this.place(this.entry(uri));
  }

  /** Add a note to a log (for in-host tests and the panel); returns its id, or undefined when refused. */
  async addNote(uri: vscode.Uri, fields: Omit<Note, 'id' | 'status' | 'created'>, expand = false): Promise<string | undefined> {
    const entry = this.entry(uri);
    const note: Note = { ...fields, id: newNoteId(), tags: normalizeTags(fields.tags), status: 'open', created: new Date().toISOString().slice(0, 10) };
    if (expand) entry.expand = note.id;
    return (await this.commit(entry, { op: 'put', note })) ? note.id : undefined;
  }

  /**
   * Confirm a filter restart at `t` of a log: a reset note in its sidecar (none when one is already within half a
   * step); the log's analysis re-runs and splits there. Returns whether the sidecar now holds it.
   */
  async confirmReset(uri: vscode.Uri, t: number, evidence: ResetEvidence = {}): Promise<boolean> {
    const entry = this.entry(uri);
    const ops = confirmResetOps(entry.store.notes(), t, this.resetTolerance(uri), evidence, new Date().toISOString().slice(0, 10));
    for (const op of ops) if (!(await this.commit(entry, op))) return false;
    return confirmedResetTimes(entry.store.notes()).some((r) => Math.abs(r - t) <= this.resetTolerance(uri));
  }

  /** Un-confirm the restart at `t` of a log (its reset notes are deleted); the analysis re-runs. Returns how many went. */
  async unconfirmReset(uri: vscode.Uri, t: number): Promise<number> {
    const entry = this.entry(uri);
    const ops = unconfirmResetOps(entry.store.notes(), t, this.resetTolerance(uri));
    for (const op of ops) await this.commit(entry, op);
    return ops.length;
  }

  /** How close a time must be to an epoch to be "at" it: half the log's median step (from its last analysis). */
  private resetTolerance(uri: vscode.Uri): number {
    const dt = this.manager.find(uri)?.report?.time.medianDt;
    return typeof dt === 'number' && dt > 0 ? dt / 2 : 1e-6;
  }

  private async confirmResetCommand(arg: unknown): Promise<void> {
    const panel = this.manager.current();
    if (!panel || !panel.report) {
      void vscode.window.showInformationMessage('Residuum: open a log analysis first (Residuum: Open Log Analysis).');
      return;
    }
    const { candidates } = resetChoices(panel.report);
    let t: number | undefined = typeof arg === 'number' && Number.isFinite(arg) ? arg : undefined;
    let evidence: ResetEvidence = {};
    if (t === undefined) {
      const open = candidates.filter((c) => !c.confirmed && !c.logged);
      const items: (vscode.QuickPickItem & { t?: number; c?: ResetChoice })[] = open.map((c) => ({
        label: `t = ${c.t} s`, description: `line ${c.line}`, detail: `the covariance of ${c.block} grew ${c.factor.toPrecision(3)}-fold in one epoch`, t: c.t, c,
      }));
      items.push({ label: 'Another time...', description: 'type the time of the restart in seconds' });
      const pick = await vscode.window.showQuickPick(items, {
        title: 'Residuum: confirm a filter reset (a new segment starts there)',
        placeHolder: open.length ? 'Covariance jumps not yet confirmed' : 'No covariance jump found; type a time',
      });
      if (!pick) return;
      if (pick.t !== undefined && pick.c) {
        t = pick.t;
        evidence = { factor: pick.c.factor, block: pick.c.block };
      } else {
        const typed = await vscode.window.showInputBox({
          title: 'Residuum: time of the filter reset', prompt: 'Seconds in the log\'s time base; the segment starts at the first epoch at or after it.',
          validateInput: (v) => (v.trim() !== '' && Number.isFinite(Number(v)) ? undefined : 'a number of seconds'),
        });
        if (typed === undefined) return;
        t = Number(typed);
      }
    } else {
      const c = candidates.find((x) => Math.abs(x.t - (t as number)) <= this.resetTolerance(panel.uri));
      if (c) evidence = { factor: c.factor, block: c.block };
    }
    if (await this.confirmReset(panel.uri, t, evidence)) void vscode.window.setStatusBarMessage(`Residuum: filter reset at t = ${t} s confirmed; re-analysing`, 4000);
  }

  private async unconfirmResetCommand(arg: unknown): Promise<void> {
    const panel = this.manager.current();
    if (!panel) {
      void vscode.window.showInformationMessage('Residuum: open a log analysis first (Residuum: Open Log Analysis).');
      return;
    }
    let t: number | undefined = typeof arg === 'number' && Number.isFinite(arg) ? arg : undefined;
    if (t === undefined) {
      const times = confirmedResetTimes(this.entry(panel.uri).store.notes());
      if (times.length === 0) {
        void vscode.window.showInformationMessage('Residuum: no filter reset of this log was confirmed (resets written in the log itself cannot be un-confirmed here).');
        return;
      }
      const pick = await vscode.window.showQuickPick(times.map((x) => ({ label: `t = ${x} s`, t: x })), { title: 'Residuum: un-confirm a filter reset' });
      if (!pick) return;
      t = pick.t;
    }
    const n = await this.unconfirmReset(panel.uri, t);
    if (n === 0) void vscode.window.showInformationMessage(`Residuum: no confirmed filter reset at t = ${t} s.`);
  }

  /** Re-run the analysis of the log's panels when its confirmed resets changed (by this window, another, or git). */
  private resetsChanged(entry: LogNotes): void {
    const key = confirmedResetTimes(entry.store.notes()).join(',');
    const before = entry.resetKey;
    entry.resetKey = key;
    if (before === undefined || before === key) return;
    this.output.info(`notes: confirmed resets of ${entry.uri.fsPath} are now [${key}]; re-analysing`);
    const panel = this.manager.find(entry.uri);
    if (panel) panel.reconfigure();
  }

  private onOpened(doc: vscode.TextDocument): void {
    if (!isNotesLog(doc.uri)) return;
    const key = doc.uri.fsPath;
    if (this.logs.has(key)) return;
    // Only logs with a sidecar get threads at once; others get them with their first note.
    if (!fs.existsSync(notesPathFor(key))) return;
    void this.refresh(this.entry(doc.uri));
  }

  private entry(uri: vscode.Uri): LogNotes {
    const key = uri.fsPath;
    let e = this.logs.get(key);
    if (e) return e;
    const store = new NotesStore(notesPathFor(key));
    const watcher = vscode.workspace.createFileSystemWatcher(new vscode.RelativePattern(vscode.Uri.file(path.dirname(key)), `${globEscape(path.basename(key))}.notes.json`));
    e = { uri, store, threads: new Map(), watcher };
    const entry = e;
    const onDisk = (): void => void this.onSidecarChanged(entry);
    watcher.onDidChange(onDisk);
    watcher.onDidCreate(onDisk);
    watcher.onDidDelete(onDisk);
    const problems = store.reload();
    e.resetKey = confirmedResetTimes(store.notes()).join(',');
    if (problems.length) this.tellProblem(e, `${problems[0].file}:${problems[0].line}${problems[0].column ? `:${problems[0].column}` : ''}: ${problems[0].message}`);
    this.logs.set(key, e);
    return e;
  }

  private async onSidecarChanged(entry: LogNotes): Promise<void> {
    let text: string | undefined;
    try {
      text = fs.readFileSync(entry.store.path, 'utf8');
    } catch {
      text = undefined;
    }
    if (text !== undefined && text === entry.store.lastText()) return; // our own write
    const problems = entry.store.reload();
    if (problems.length) this.tellProblem(entry, `${problems[0].file}:${problems[0].line}${problems[0].column ? `:${problems[0].column}` : ''}: ${problems[0].message}`);
    else entry.message = undefined;
    if (!problems.length && entry.store.pendingCount() > 0) this.save(entry, false);
    await this.refresh(entry);
  }

  /** A sidecar that cannot be read: say so once per distinct problem (the panel shows it until it is fixed). */
  private tellProblem(entry: LogNotes, message: string): void {
    const repeat = entry.message === message;
    entry.message = message;
    this.output.warn(`notes: ${message}`);
    if (!repeat) void vscode.window.showWarningMessage(`Residuum: ${message}. New notes are kept in memory until the file can be read.`);
  }

  /** Apply one edit and save; returns whether the edit was taken (saved or kept pending). */
  private async commit(entry: LogNotes, op: NoteOp): Promise<boolean> {
    const refused = entry.store.edit(op);
    if (refused) {
      void vscode.window.showErrorMessage(`Residuum: the note was not added: ${refused}.`);
      return false;
    }
    this.save(entry, true);
    await this.refresh(entry);
    return true;
  }

  private save(entry: LogNotes, tell: boolean): void {
    const r = entry.store.save();
    entry.message = r.saved ? undefined : r.message;
    if (r.saved) return;
    this.output.warn(`notes: ${r.message}`);
    if (!tell) return;
    void vscode.window.showWarningMessage(`Residuum: ${r.message}`, 'Retry').then((choice) => {
      if (choice !== 'Retry') return;
      this.save(entry, true);
      void this.refresh(entry);
    });
  }

  private async indexOf(entry: LogNotes): Promise<AnchorLog | undefined> {
    const file = entry.uri.fsPath;
    let st: fs.Stats;
    try {
      st = await fs.promises.stat(file);
    } catch {
      return undefined;
    }
    const stamp = `${st.size}/${st.mtimeMs}`;
    if (entry.index?.stamp === stamp) return entry.index.log;
    let log: AnchorLog | undefined;
    if (st.size <= MAX_INDEX_BYTES) {
      try {
        log = indexLogText(await fs.promises.readFile(file, 'utf8'), file);
      } catch (e) {
        this.output.warn(`notes: cannot index ${file}: ${(e as Error).message}`);
      }
    }
    entry.index = { stamp, log };
    return log;
  }

  private async place(entry: LogNotes): Promise<AnchoredNote[]> {
    const notes = entry.store.notes();
    const index = await this.indexOf(entry);
    if (index) return anchorNotes(notes, index);
    // A log too big to index here: the lines of the last analysis, by note id.
    const reportNotes = (this.manager.find(entry.uri)?.report?.notes ?? []) as Partial<AnchoredNote>[];
    const byId = new Map(reportNotes.filter((n) => typeof n === 'object' && n !== null && typeof n.id === 'string').map((n) => [n.id as string, n]));
    return notes.map((n) => {
      const r = byId.get(n.id);
      return r && r.t === n.t ? { ...n, line: r.line, file: r.file, detached: r.detached === true, reason: r.reason } : { ...n, detached: false };
    });
  }

  private refreshKey(key: string | undefined): void {
    const e = key ? this.logs.get(key) : undefined;
    if (e) void this.refresh(e);
  }

  /**
   * Re-draw the comment threads and tell the log's panels. A channel focus (from a CodeLens) goes with the answer to
   * the panel's own `notes/request` (`asker`), or to a visible panel: a hidden panel's webview is re-created when it
   * is shown and would lose it.
   */
  private async refresh(entry: LogNotes, asker?: AnalysisPanel): Promise<void> {
    this.resetsChanged(entry);
    const placed = await this.place(entry);
    const key = entry.uri.fsPath;
    const keep = new Set<string>();
    for (const n of placed) {
      const line = !n.detached && n.line !== undefined && (n.file === undefined || path.resolve(n.file) === key) ? n.line : undefined;
      if (line === undefined && !n.detached) continue;
      const at = line !== undefined ? line - 1 : 0;
      // Threads are updated in place (a thread re-created on every change would flicker and lose its state).
      let thread = entry.threads.get(n.id);
      if (thread && thread.range?.start.line !== at) {
        thread.dispose();
        thread = undefined;
      }
      const comment = new NoteComment(key, n);
      if (!thread) {
        thread = this.comments.createCommentThread(entry.uri, new vscode.Range(at, 0, at, 0), [comment]);
        thread.canReply = false;
        thread.collapsibleState = entry.expand === n.id ? vscode.CommentThreadCollapsibleState.Expanded : vscode.CommentThreadCollapsibleState.Collapsed;
        entry.threads.set(n.id, thread);
        this.threadOf.set(thread, { key, id: n.id });
      } else thread.comments = [comment];
      thread.label = n.detached ? `Detached note (t = ${n.t} s)` : `Residuum note${n.tags.length ? ` · ${n.tags.map((t) => `#${t}`).join(' ')}` : ''}`;
      thread.contextValue = n.status === 'resolved' ? 'residuum.note.resolved' : 'residuum.note.open';
      thread.state = n.status === 'resolved' ? vscode.CommentThreadState.Resolved : vscode.CommentThreadState.Unresolved;
      keep.add(n.id);
    }
    for (const [id, t] of entry.threads) {
      if (keep.has(id)) continue;
      t.dispose();
      entry.threads.delete(id);
    }
    entry.expand = undefined;
    const message: NotesUpdateMessage = { type: 'notes/update', notes: placed.map(toInfo), pending: entry.store.pendingCount() };
    if (entry.message) message.message = entry.message;
    for (const p of this.panels) {
      if (p.uri.fsPath !== key || !this.readyPanels.has(p)) continue;
      const focus = this.pendingFocus.get(p.uri.toString());
      if (focus && (p === asker || p.panel.visible)) {
        message.focusChannel = focus;
        this.pendingFocus.delete(p.uri.toString());
      }
      void p.panel.webview.postMessage(message);
      delete message.focusChannel;
    }
  }

  private async onPanelMessage(panel: AnalysisPanel, msg: NotesPanelMessage): Promise<void> {
    this.panels.add(panel);
    const entry = this.entry(panel.uri);
    switch (msg.type) {
      case 'notes/request':
        this.readyPanels.add(panel);
        await this.refresh(entry, panel);
        break;
      case 'notes/add': {
        if (msg.text.trim() === '' && msg.tags.length === 0) {
          void vscode.window.showWarningMessage('Residuum: a note needs a text or a tag.');
          return;
        }
        const fields: Omit<Note, 'id' | 'status' | 'created'> = { t: msg.t, text: msg.text.trim(), tags: msg.tags };
        if (msg.tEnd !== undefined) fields.tEnd = msg.tEnd;
        if (msg.channel !== undefined) fields.channel = msg.channel;
        if (msg.updateId !== undefined) fields.updateId = msg.updateId;
        if (msg.finding !== undefined) fields.finding = msg.finding;
        await this.addNote(panel.uri, fields, true);
        break;
      }
      case 'notes/edit': {
        const set: { text?: string; tags?: string[]; status?: 'open' | 'resolved' } = {};
        if (msg.text !== undefined) set.text = msg.text;
        if (msg.tags !== undefined) set.tags = msg.tags;
        if (msg.status !== undefined) set.status = msg.status;
        await this.commit(entry, { op: 'patch', id: msg.id, set });
        break;
      }
      case 'notes/delete':
        await this.commit(entry, { op: 'delete', id: msg.id });
        break;
      case 'code/goto':
        await this.codeLinks.goto(panel.uri, msg.name);
        break;
      case 'reset/confirm': {
        const evidence: ResetEvidence = {};
        if (msg.factor !== undefined) evidence.factor = msg.factor;
        if (msg.block !== undefined) evidence.block = msg.block;
        await this.confirmReset(panel.uri, msg.t, evidence);
        break;
      }
      case 'reset/unconfirm':
        await this.unconfirmReset(panel.uri, msg.t);
        break;
    }
  }

  private async addAtLine(arg?: unknown): Promise<void> {
    const editor = vscode.window.activeTextEditor;
    const uri = arg instanceof vscode.Uri ? arg : editor?.document.uri;
    if (!uri || !editor || editor.document.uri.toString() !== uri.toString() || !isNotesLog(uri)) {
      void vscode.window.showInformationMessage('Residuum: put the cursor on a line of a log (CSV or JSON Lines) to add a note there.');
      return;
    }
    const sel = editor.selection;
    const target = await this.targetOf(uri, sel.start.line + 1, sel.end.line + 1);
    if (!target) return;
    const input = await vscode.window.showInputBox({ title: `Residuum: note at t = ${target.t} s`, prompt: 'A short text; words starting with # become tags.', placeHolder: 'anchor 5 blocked by a rack #nlos' });
    if (input === undefined) return;
    const { text, tags } = splitTags(input);
    if (text === '' && tags.length === 0) return;
    await this.addNote(uri, { ...target, text, tags }, true);
  }

  private async createFromReply(reply: vscode.CommentReply): Promise<void> {
    const uri = reply.thread.uri;
    const line = (reply.thread.range?.start.line ?? 0) + 1;
    const endLine = (reply.thread.range?.end.line ?? line - 1) + 1;
    reply.thread.dispose();
    const target = await this.targetOf(uri, line, endLine);
    if (!target) return;
    const { text, tags } = splitTags(reply.text);
    await this.addNote(uri, { ...target, text, tags }, true);
  }

  /** The anchor of a note made on lines `line`..`endLine` (a range note when they are different epochs). */
  private async targetOf(uri: vscode.Uri, line: number, endLine: number): Promise<(LineTarget & { tEnd?: number }) | undefined> {
    const index = await this.indexOf(this.entry(uri));
    if (!index) {
      void vscode.window.showWarningMessage('Residuum: notes on lines need a CSV or JSON Lines log with a time column (of at most 32 MB); add the note from the panel instead.');
      return undefined;
    }
    const target = targetAtLine(index, line);
    if (!target) {
      void vscode.window.showInformationMessage(`Residuum: line ${line} is not a record of the log (a header, comment or blank line); put the cursor on a data line.`);
      return undefined;
    }
    if (endLine > line) {
      const end = targetAtLine(index, endLine);
      if (end && end.t > target.t) return { t: target.t, tEnd: end.t };
    }
    return target;
  }

  private startEdit(c: NoteComment): void {
    const found = this.findThread(c);
    if (!found) return;
    c.body = c.editable();
    c.mode = vscode.CommentMode.Editing;
    found.comments = [c];
  }

  private async saveEdit(c: NoteComment): Promise<void> {
    const entry = this.logs.get(c.logKey);
    if (!entry) return;
    const raw = typeof c.body === 'string' ? c.body : c.body.value;
    const { text, tags } = splitTags(raw);
    await this.commit(entry, { op: 'patch', id: c.note.id, set: { text, tags } });
  }

  private findThread(c: NoteComment): vscode.CommentThread | undefined {
    return this.logs.get(c.logKey)?.threads.get(c.note.id);
  }

  private async onThread(thread: vscode.CommentThread, op: (id: string) => NoteOp): Promise<void> {
    const at = this.threadOf.get(thread);
    const entry = at ? this.logs.get(at.key) : undefined;
    if (!at || !entry) return;
    await this.commit(entry, op(at.id));
  }

  private async goToCodeCommand(arg: unknown, name: unknown): Promise<void> {
    const log = arg instanceof vscode.Uri ? arg : typeof arg === 'string' ? vscode.Uri.parse(arg) : this.manager.current()?.uri;
    if (!log) {
      void vscode.window.showInformationMessage('Residuum: open a log analysis first.');
      return;
    }
    const column = typeof name === 'string' ? name : await vscode.window.showInputBox({ title: 'Residuum: go to the code that writes a column', prompt: 'Channel or column name', placeHolder: 'nu_tdoa' });
    if (column) await this.codeLinks.goto(log, column);
  }

  private async showChannel(uriArg: unknown, channel: unknown): Promise<void> {
    if (typeof uriArg !== 'string' || typeof channel !== 'string') return;
    const uri = vscode.Uri.parse(uriArg, true);
    this.pendingFocus.set(uri.toString(), channel);
    const before = this.manager.find(uri);
    const alive = before !== undefined && before.panel.visible && this.readyPanels.has(before);
    const panel = this.manager.open(uri);
    await panel.loaded;
    this.panels.add(panel);
    // A panel whose webview is alive gets the focus now; one being (re-)created when it asks for its notes.
    if (alive) await this.refresh(this.entry(uri), panel);
  }
}

function toInfo(n: AnchoredNote): NoteInfo {
  const out: NoteInfo = { id: n.id, t: n.t, text: n.text, tags: n.tags, status: n.status, detached: n.detached };
  for (const k of ['tEnd', 'channel', 'updateId', 'finding', 'line', 'reason'] as const) if (n[k] !== undefined) (out as unknown as Record<string, unknown>)[k] = n[k];
  return out;
}

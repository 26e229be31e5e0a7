/**
 * The panel's notes: the list (edit, resolve, delete, show), the form to add a note on the epoch at the cursor, the
 * visible time range (a selection on a chart zooms to it) or a finding, the markers the time charts draw at notes,
 * the "code" links of the findings and channels (go to the source that writes them), and the focus on a channel
 * asked for by a CodeLens. The host owns the notes (host/notes.ts); this module only asks and shows.
 *
 * Every text from a note is set with `textContent` (never parsed as HTML).
 *
 * DOM hooks kept for the e2e tests: `<section data-testid="notes">` with `data-count`; `<ol data-testid="notes-list">`
 * of `<li data-note-id data-line data-status data-detached>`; `[data-testid="note-text"]`, `[data-testid="note-tags"]`,
 * `[data-testid="note-about"]`, `[data-testid="note-add"]`; `document.body.dataset.focusedChannel`.
 */
import { tagsFromField as parseTagsField } from '../extension/core/notes/sidecar';
import type { Finding } from '../extension/core/report';
import type { InitMessage, NoteInfo, NotesUpdateMessage, ViewState } from '../extension/protocol';
import { el } from './dom';
import { panelApi } from './vscodeApi';

let notes: NoteInfo[] = [];
let pending = 0;
let problem: string | undefined;
let section: HTMLElement | undefined;
let init: InitMessage | undefined;
let currentView: () => ViewState = () => ({});
let selectTime: (t: number) => void = () => undefined;
/** A channel to show once its chart exists (the focus may arrive before the views are built). */
let wantFocus: string | undefined;

/** What a note is about, as the form offers it. */
interface About {
  label: string;
  t: number;
  tEnd?: number;
  channel?: string;
  updateId?: string;
  finding?: string;
}

function fmt(t: number): string {
  return Number.isInteger(t) ? String(t) : t.toFixed(3).replace(/0+$/, '').replace(/\.$/, '');
}

function aboutChoices(message: InitMessage, view: ViewState): About[] {
  const report = message.report;
  const out: About[] = [];
  const t = view.cursor_s ?? report.worst[0]?.t ?? report.time.start ?? 0;
  out.push({ label: `The epoch at the cursor (t = ${fmt(t)} s)`, t });
  if (view.window) out.push({ label: `The visible time range (t = ${fmt(view.window[0])}–${fmt(view.window[1])} s)`, t: view.window[0], tEnd: view.window[1] });
  report.findings.slice(0, 100).forEach((f: Finding) => {
    if (f.t === undefined) return;
    const a: About = { label: `Finding: ${f.kind}${f.channel ? ` ${f.channel}` : ''}${f.id ? ` ${f.id}` : ''} at t = ${fmt(f.t)} s`, t: f.t, finding: f.kind };
    if (f.tEnd !== undefined && f.tEnd >= f.t) a.tEnd = f.tEnd;
    if (f.channel !== undefined) a.channel = f.channel;
    if (f.id !== undefined) a.updateId = f.id;
    out.push(a);
  });
  return out;
}

function whereLabel(n: NoteInfo): string {
  const parts = [n.tEnd !== undefined ? `t = ${fmt(n.t)}–${fmt(n.tEnd)} s` : `t = ${fmt(n.t)} s`];
  if (n.channel) parts.push(n.updateId ? `${n.channel} ${n.updateId}` : n.channel);
  if (n.finding) parts.push(`on ${n.finding}`);
  if (n.detached) parts.push(`detached: ${n.reason ?? 'its epoch is not in this log'}`);
  else if (n.line !== undefined) parts.push(`line ${n.line}`);
  if (n.status === 'resolved') parts.push('resolved');
  return parts.join(' · ');
}

function smallButton(text: string, label: string, onClick: () => void): HTMLButtonElement {
  const b = el('button', { type: 'button', class: 'link', 'aria-label': label }, text);
  b.addEventListener('click', onClick);
  return b;
}

function noteItem(n: NoteInfo): HTMLElement {
  const li = el('li', { 'data-note-id': n.id, 'data-status': n.status, 'data-detached': String(n.detached), class: `note status-${n.status}${n.detached ? ' detached' : ''}` });
  if (n.line !== undefined) li.dataset.line = String(n.line);
  const text = el('p', { class: 'note-text' }, n.text === '' ? '(no text)' : n.text);
  const tags = el('p', { class: 'note-tags' }, n.tags.map((t) => `#${t}`).join(' '));
  const where = el('p', { class: 'note-where' }, whereLabel(n));
  const actions = el('p', { class: 'note-actions' });
  actions.append(
    smallButton('Show', `Show the note's epoch at t = ${fmt(n.t)} s`, () => {
      selectTime(n.t);
      if (n.line !== undefined) panelApi.post({ type: 'reveal/line', line: n.line, t: n.t });
    }),
    smallButton('Edit', 'Edit the note', () => startEdit(li, n)),
    smallButton(n.status === 'open' ? 'Resolve' : 'Reopen', n.status === 'open' ? 'Mark the note resolved' : 'Reopen the note', () =>
      panelApi.post({ type: 'notes/edit', id: n.id, status: n.status === 'open' ? 'resolved' : 'open' }),
    ),
  );
  const del = smallButton('Delete', 'Delete the note', () => {
    // Two clicks: webviews have no confirm dialog.
    if (del.dataset.armed === 'true') panelApi.post({ type: 'notes/delete', id: n.id });
    else {
      del.dataset.armed = 'true';
      del.textContent = 'Delete: click again';
    }
  });
  actions.append(del);
  if (n.channel) actions.append(smallButton('Code', `Go to the code that writes ${n.channel}`, () => panelApi.post({ type: 'code/goto', name: n.channel as string })));
  li.append(text, tags, where, actions);
  return li;
}

function startEdit(li: HTMLElement, n: NoteInfo): void {
  const text = el('input', { type: 'text', class: 'note-edit-text', 'aria-label': 'Note text', maxlength: '4000' });
  text.value = n.text;
  const tags = el('input', { type: 'text', class: 'note-edit-tags', 'aria-label': 'Tags', maxlength: '600' });
  tags.value = n.tags.join(' ');
  const save = el('button', { type: 'button' }, 'Save');
  const cancel = el('button', { type: 'button' }, 'Cancel');
  save.addEventListener('click', () => panelApi.post({ type: 'notes/edit', id: n.id, text: text.value.trim(), tags: parseTagsField(tags.value) }));
  cancel.addEventListener('click', () => renderList());
  li.replaceChildren(el('label', {}, 'Text ', text), el('label', {}, 'Tags ', tags), save, cancel);
  text.focus();
}

function renderList(): void {
  if (!section) return;
  section.dataset.count = String(notes.length);
  const heading = section.querySelector('h2');
  if (heading) heading.textContent = `Notes (${notes.length})`;
  const status = section.querySelector('.notes-status') as HTMLElement | null;
  if (status) {
    const parts: string[] = [];
    if (problem) parts.push(problem);
    if (pending > 0) parts.push(`${pending} change${pending === 1 ? '' : 's'} not saved yet (kept in memory).`);
    status.textContent = parts.join(' ');
    status.hidden = parts.length === 0;
  }
  const list = section.querySelector('[data-testid="notes-list"]') as HTMLElement | null;
  if (!list) return;
  list.replaceChildren(...notes.map(noteItem));
  const empty = section.querySelector('.notes-empty') as HTMLElement | null;
  if (empty) empty.hidden = notes.length > 0;
}

function buildForm(message: InitMessage): HTMLElement {
  const form = el('form', { class: 'note-form', 'aria-label': 'Add a note' });
  const about = el('select', { 'data-testid': 'note-about', 'aria-label': 'The note is about' });
  const text = el('input', { type: 'text', 'data-testid': 'note-text', 'aria-label': 'Note text', placeholder: 'anchor 5 blocked by a rack', maxlength: '4000' });
  const tags = el('input', { type: 'text', 'data-testid': 'note-tags', 'aria-label': 'Tags', placeholder: 'nlos, rack', maxlength: '600' });
  const add = el('button', { type: 'submit', 'data-testid': 'note-add' }, 'Add note');
  let choices: About[] = [];
  const fill = (): void => {
    const keep = about.selectedIndex;
    choices = aboutChoices(message, currentView());
    about.replaceChildren(...choices.map((c, i) => el('option', { value: String(i) }, c.label)));
    if (keep > 0 && keep < choices.length) about.selectedIndex = keep;
  };
  fill();
  // The cursor and the zoom change while the panel is open: refresh the choices when the user comes to the form.
  about.addEventListener('focus', fill);
  about.addEventListener('mousedown', fill);
  form.addEventListener('submit', (e) => {
    e.preventDefault();
    if (about.selectedIndex === 0) fill();
    const c = choices[about.selectedIndex] ?? choices[0];
    const tagList = parseTagsField(tags.value);
    if (!c || (text.value.trim() === '' && tagList.length === 0)) {
      text.focus();
      return;
    }
    const msg: Parameters<typeof panelApi.post>[0] = { type: 'notes/add', t: c.t, text: text.value.trim(), tags: tagList };
    if (c.tEnd !== undefined) msg.tEnd = c.tEnd;
    if (c.channel !== undefined) msg.channel = c.channel;
    if (c.updateId !== undefined) msg.updateId = c.updateId;
    if (c.finding !== undefined) msg.finding = c.finding;
    panelApi.post(msg);
    text.value = '';
    tags.value = '';
  });
  form.append(el('label', {}, 'About ', about), el('label', {}, 'Text ', text), el('label', {}, 'Tags ', tags), add);
  return form;
}

/** Add "Code" (and "Note") buttons to the findings list built by main.ts, and code links for the channels. */
function augmentFindings(host: HTMLElement, message: InitMessage): void {
  const items = host.querySelectorAll<HTMLElement>('[data-testid="findings-list"] > li');
  message.report.findings.forEach((f, i) => {
    const li = items[i];
    if (!li || !f.channel) return;
    li.append(' ', smallButton('Code', `Go to the code that writes ${f.channel}`, () => panelApi.post({ type: 'code/goto', name: f.channel as string })));
  });
  const channels = message.report.channels.map((c) => c.name);
  if (channels.length) {
    const p = el('p', { class: 'code-links', 'data-testid': 'code-links' }, 'Go to the code that writes: ');
    channels.forEach((ch, i) => {
      if (i > 0) p.append(', ');
      p.append(smallButton(ch, `Go to the code that writes channel ${ch}`, () => panelApi.post({ type: 'code/goto', name: ch })));
    });
    host.append(p);
  }
}

function focusChannel(channel: string): void {
  const target = document.querySelector<HTMLElement>(`section.chart[data-series="${CSS.escape(`nis/${channel}`)}"]`) ?? document.querySelector<HTMLElement>(`section.chart[data-series^="${CSS.escape(`innovation/${channel}`)}"]`);
  if (!target) return;
  wantFocus = undefined;
  document.body.dataset.focusedChannel = channel;
  const view = target.closest('vscode-panel-view');
  const root = view?.parentElement;
  if (view && root && /^view-\d+$/.test(view.id)) root.setAttribute('activeid', view.id.replace('view-', 'tab-'));
  // After the tab switch has laid the view out.
  requestAnimationFrame(() => {
    target.scrollIntoView({ block: 'start' });
    target.focus({ preventScroll: true });
  });
}

/** The notes part of the panel (called by main.ts). */
export const notesView = {
  /** Build the notes section at the end of the overview and ask the host for the notes. */
  mount(host: HTMLElement, message: InitMessage, view: () => ViewState, select: (t: number) => void): void {
    init = message;
    currentView = view;
    selectTime = select;
    augmentFindings(host, message);
    section = el('section', { 'data-testid': 'notes', class: 'notes', 'aria-labelledby': 'notes-heading' });
    section.append(
      el('h2', { id: 'notes-heading' }, `Notes (${notes.length})`),
      el('p', { class: 'notes-status', role: 'status', hidden: '' }),
      buildForm(message),
      el('p', { class: 'notes-empty' }, 'No notes yet. Notes are saved beside the log in <log>.notes.json.'),
      el('ol', { 'data-testid': 'notes-list', class: 'pick-list notes-list', 'aria-labelledby': 'notes-heading' }),
    );
    host.append(section);
    renderList();
    panelApi.post({ type: 'notes/request' });
    // The other views are built after the overview: try a pending channel focus once they are.
    if (wantFocus) setTimeout(() => wantFocus && focusChannel(wantFocus), 0);
  },

  /** New notes from the host. */
  update(msg: NotesUpdateMessage): void {
    notes = msg.notes;
    pending = msg.pending;
    problem = msg.message;
    renderList();
    if (msg.focusChannel) {
      wantFocus = msg.focusChannel;
      focusChannel(msg.focusChannel);
    }
  },

  /** Times the time charts mark (every note's start, and the end of a range note). */
  markerTimes(): number[] {
    const out: number[] = [];
    for (const n of notes) {
      out.push(n.t);
      if (n.tEnd !== undefined) out.push(n.tEnd);
    }
    return out;
  },

  /** The init the notes were built for (tests). */
  current(): InitMessage | undefined {
    return init;
  },
};

/**
 * The panel's filter restarts: the segments of the run (each starts at the log's beginning, a reset written in the
 * log, or a reset the user confirmed) and the covariance-jump candidates, each with "Treat as reset" (or "Undo
 * reset" once confirmed). The host stores a confirmed reset in the notes sidecar and re-runs the analysis, which
 * sends a new `init`: this module never changes the report itself.
 *
 * DOM hooks kept for the e2e tests: `<section data-testid="resets" data-segments="N">`; `<ol data-testid="segments">`
 * of `<li data-t data-start>`; buttons `[data-testid="reset-confirm"]` and `[data-testid="reset-unconfirm"]` with
 * `data-t`.
 */
import type { Finding, Report } from '../extension/core/report';
import { el } from './dom';
import { panelApi } from './vscodeApi';

/** The report's `resets` block as this view reads it (core/resets/index.ts ResetsBlock). */
interface ResetsView {
  factor?: number;
  candidates?: { t: number; line: number; factor: number; block: string; confirmed: boolean; logged: boolean }[];
  segments?: { t: number; tEnd: number; epochs: number; start: 'log' | 'logged' | 'confirmed' }[];
  confirmed?: number[];
}

function fmt(t: number): string {
  return Number.isInteger(t) ? String(t) : t.toFixed(3).replace(/0+$/, '').replace(/\.$/, '');
}

const START_TEXT = { log: 'start of the log', logged: 'reset written in the log', confirmed: 'reset you confirmed' } as const;

/** Per-segment figures of the report (errors.segments by block, channels[].nis.segments), in one line of text. */
function segmentFigures(report: Report, t: number): string {
  const parts: string[] = [];
  const segs = (report.errors as { segments?: Record<string, unknown>[] } | undefined)?.segments ?? [];
  const e = segs.find((x) => x.t === t);
  for (const block of ['position', 'velocity', 'orientation'] as const) {
    const b = e?.[block] as { nees?: { mean?: number }; convergence?: { settleTime?: number; rate?: number } } | undefined;
    if (!b) continue;
    const c = b.convergence;
    const settle = c?.settleTime !== undefined ? `settles in ${fmt(Number(c.settleTime.toFixed(2)))} s` : 'does not settle';
    const rate = c?.rate !== undefined ? ` (rate ${c.rate.toPrecision(2)}/s)` : '';
    const nees = b.nees?.mean !== undefined ? `, NEES ${b.nees.mean.toPrecision(3)}` : '';
    parts.push(`${block} ${settle}${rate}${nees}`);
  }
  for (const ch of report.channels) {
    const ns = (ch.nis as { segments?: { t: number; mean?: number }[] }).segments;
    // NIS segments start at the channel's first update in the segment, at or after the segment's start
    const mine = ns?.filter((x) => x.t >= t).sort((a, b) => a.t - b.t)[0];
    if (mine?.mean !== undefined) parts.push(`${ch.name} NIS ${mine.mean.toPrecision(3)} (${ch.dof} dof)`);
  }
  return parts.length ? ` · ${parts.join(' · ')}` : '';
}

/** A "Treat as reset" button for the epoch at `t` (disabled once pressed, until the new analysis arrives). */
function confirmButton(t: number, factor?: number, block?: string): HTMLButtonElement {
  const b = el('button', { type: 'button', 'data-testid': 'reset-confirm', 'data-t': String(t), title: 'Start a new segment here: stored with the log in its notes file, and the run is analysed again' }, 'Treat as reset');
  b.addEventListener('click', (e) => {
    e.stopPropagation();
    b.disabled = true;
    b.textContent = 'Re-analysing...';
    panelApi.post({ type: 'reset/confirm', t, ...(factor !== undefined ? { factor } : {}), ...(block !== undefined ? { block } : {}) });
  });
  return b;
}

function unconfirmButton(t: number): HTMLButtonElement {
  const b = el('button', { type: 'button', 'data-testid': 'reset-unconfirm', 'data-t': String(t), title: 'Remove the confirmed reset from the notes file and analyse the run again' }, 'Undo reset');
  b.addEventListener('click', (e) => {
    e.stopPropagation();
    b.disabled = true;
    b.textContent = 'Re-analysing...';
    panelApi.post({ type: 'reset/unconfirm', t });
  });
  return b;
}

/** The "Treat as reset" action of a `covariance-jump` finding (undefined for other findings). */
export function resetAction(f: Finding): HTMLButtonElement | undefined {
  if (f.kind !== 'covariance-jump' || f.t === undefined) return undefined;
  return confirmButton(f.t, f.score, f.channel);
}

/** The segments and candidates section, or undefined when the run has one segment and no candidate. */
export function resetsSection(report: Report): HTMLElement | undefined {
  const r = report.resets as ResetsView | undefined;
  const segments = r?.segments ?? [];
  const candidates = r?.candidates ?? [];
  if (segments.length <= 1 && candidates.length === 0) return undefined;
  const section = el('section', { 'data-testid': 'resets', 'data-segments': String(segments.length), 'aria-labelledby': 'resets-heading' });
  section.append(el('h2', { id: 'resets-heading' }, `Segments (${segments.length})`));
  section.append(el('p', {}, 'A filter restart starts a new segment; convergence and consistency are computed per segment, and no window spans a restart.'));
  const list = el('ol', { 'data-testid': 'segments' });
  for (const s of segments) {
    const figures = segments.length > 1 ? segmentFigures(report, s.t) : '';
    const li = el('li', { 'data-t': String(s.t), 'data-start': s.start }, `t = ${fmt(s.t)} to ${fmt(s.tEnd)} s, ${s.epochs} epochs (${START_TEXT[s.start] ?? s.start})${figures} `);
    if (s.start === 'confirmed') li.append(unconfirmButton(s.t));
    list.append(li);
  }
  section.append(list);
  if (candidates.length > 0) {
    section.append(el('h3', {}, `Covariance jumps (threshold: a block's variance growing ${fmt(r?.factor ?? 10)}-fold in one epoch)`));
    const cl = el('ul', { 'data-testid': 'reset-candidates' });
    for (const c of candidates) {
      const state = c.logged ? ' (a reset written in the log)' : c.confirmed ? ' (confirmed reset)' : '';
      const li = el('li', { 'data-t': String(c.t) }, `t = ${fmt(c.t)} s, line ${c.line}: ${c.block} grew ${c.factor.toPrecision(3)}-fold${state} `);
      if (!c.logged && !c.confirmed) li.append(confirmButton(c.t, c.factor, c.block));
      else if (c.confirmed && !c.logged) li.append(unconfirmButton(c.t));
      cl.append(li);
    }
    section.append(cl);
  }
  return section;
}

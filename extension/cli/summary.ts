/**
 * The readable summary `analyze` prints without `--json`: plain text tables, one screen for a typical run.
 */
import type { Report, ChannelReport } from '../core/report';

/** Format a number for a table: fixed digits, or '-' when absent. */
export function fmt(v: unknown, digits = 3): string {
  return typeof v === 'number' && Number.isFinite(v) ? v.toFixed(digits) : '-';
}

/** Left-aligned text table with a header row. */
export function table(header: string[], rows: string[][]): string {
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] ?? '').length)));
  const line = (cells: string[]): string => cells.map((c, i) => (c ?? '').padEnd(widths[i])).join('  ').trimEnd();
  return [line(header), line(widths.map((w) => '-'.repeat(w))), ...rows.map(line)].join('\n') + '\n';
}

function channelRow(c: ChannelReport): string[] {
  const b = c.nis.bounds95;
  return [
    c.name,
    String(c.dof),
    String(c.updates),
    String(c.rejected),
    String(c.outliers),
    fmt(c.nis.mean),
    c.nis.inside95 !== undefined ? `${(100 * c.nis.inside95).toFixed(1)}%` : '-',
    b ? `[${fmt(b[0])}, ${fmt(b[1])}]` : '-',
    fmt(c.whiteness?.ljungBoxP),
  ];
}

/** The whole summary of a report. */
export function formatSummary(r: Report): string {
  const out: string[] = [];
  out.push(`Residuum ${r.tool.version}: ${r.source.path} (${r.source.format}, ${r.source.rows} records${r.partial ? ', PARTIAL: decimated to fit the memory budget' : ''})`);
  const t = r.time;
  out.push(`Epochs ${t.epochs}, t ${fmt(t.start)} .. ${fmt(t.end)} s, median step ${fmt(t.medianDt, 4)} s\n`);
  if (r.channels.length > 0) {
    out.push('Channels (NIS against chi-square, 95% two-sided bounds)');
    out.push(table(['channel', 'dof', 'updates', 'rejected', 'outliers', 'NIS mean', 'inside95', 'bounds95', 'Ljung-Box p'], r.channels.map(channelRow)));
  }
  const e = r.errors as Record<string, Record<string, unknown> | number> | undefined;
  if (e) {
    const pos = e.position as Record<string, unknown> | undefined;
    const vel = e.velocity as Record<string, unknown> | undefined;
    const ori = e.orientation as Record<string, unknown> | undefined;
    const nees = (b: Record<string, unknown> | undefined): string => {
      const n = b?.nees as { mean?: number; inside95?: number } | undefined;
      return n ? `${fmt(n.mean, 2)} (${n.inside95 !== undefined ? (100 * n.inside95).toFixed(1) + '% inside' : '-'})` : '-';
    };
    out.push('Errors against the reference');
    out.push(
      table(
        ['block', 'RMSE', 'max', 'NEES mean'],
        [
          ...(pos ? [['position [m]', fmt(pos.rmse), fmt(pos.max), nees(pos)]] : []),
          ...(vel ? [['velocity [m/s]', fmt(vel.rmse), fmt(vel.max), nees(vel)]] : []),
          ...(ori ? [['orientation [deg]', fmt(ori.rmseDeg), fmt(ori.maxDeg), nees(ori)]] : []),
        ],
      ),
    );
  }
  out.push(...resetLines(r));
  const counts = new Map<string, number>();
  for (const f of r.findings) counts.set(f.kind, (counts.get(f.kind) ?? 0) + 1);
  out.push(`Findings: ${r.findings.length}${counts.size ? ' (' + [...counts].map(([k, n]) => `${k} ${n}`).join(', ') + ')' : ''}`);
  const notes = r.notes.filter((n): n is Record<string, unknown> => typeof n === 'object' && n !== null);
  if (notes.length > 0) {
    out.push('\nNotes');
    out.push(
      table(
        ['t [s]', 'line', 'status', 'note'],
        notes.map((n) => [
          fmt(n.t) + (typeof n.tEnd === 'number' ? ` .. ${fmt(n.tEnd)}` : ''),
          n.detached === true ? 'detached' : typeof n.line === 'number' ? String(n.line) : '-',
          typeof n.status === 'string' ? n.status : '',
          `${typeof n.text === 'string' ? n.text.replace(/\s+/g, ' ') : ''}${Array.isArray(n.tags) && n.tags.length ? ' [' + n.tags.join(', ') + ']' : ''}`,
        ]),
      ),
    );
  }
  if (r.worst.length > 0) {
    out.push('\nWorst updates (smallest chi-square tail probability)');
    out.push(
      table(
        ['t [s]', 'line', 'channel', 'id', 'NIS', 'p'],
        r.worst.slice(0, 10).map((w) => [fmt(w.t), String(w.line), w.channel, w.id ?? '', fmt(w.score, 2), w.p.toExponential(2)]),
      ),
    );
  }
  return out.join('\n') + '\n';
}

/** Segments (when a reset splits the run) and unconfirmed covariance-jump candidates, for the summary. */
function resetLines(r: Report): string[] {
  const b = r.resets as { segments?: { t: number; tEnd: number; epochs: number; start: string }[]; candidates?: { t: number; line: number; factor: number; block: string; confirmed: boolean; logged: boolean }[] } | undefined;
  if (!b) return [];
  const out: string[] = [];
  const segs = b.segments ?? [];
  if (segs.length > 1) {
    out.push('Segments (a filter restart starts each; convergence and consistency are per segment)');
    out.push(table(['#', 't [s]', 'until [s]', 'epochs', 'starts at'], segs.map((s, i) => [String(i + 1), fmt(s.t), fmt(s.tEnd), String(s.epochs), s.start === 'log' ? 'start of log' : s.start === 'logged' ? 'reset in the log' : 'confirmed reset'])));
  }
  const open = (b.candidates ?? []).filter((c) => !c.confirmed && !c.logged);
  if (open.length > 0) {
    out.push('Covariance jumps not confirmed as resets (confirm with --reset-at T or in the panel)');
    out.push(table(['t [s]', 'line', 'block', 'variance x'], open.slice(0, 10).map((c) => [fmt(c.t), String(c.line), c.block, c.factor.toPrecision(3)])));
  }
  return out;
}

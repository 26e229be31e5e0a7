/**
 * Words for a growing log's re-reads (no `vscode`, so unit tests import it): the output channel's line saying which
 * bytes a run read, and the panel's notice when the log was read again from the start.
 */
import type { ReadInfo } from '../protocol';

/** One line for the output channel: which bytes of the log a run read. */
export function describeRead(read: ReadInfo | undefined): string {
  if (!read) return 'read whole';
  if (read.mode === 'whole') return `read whole, ${read.bytes} bytes`;
  const why = read.restarted ? `, from the start: ${read.restarted}` : '';
  return `read bytes ${read.start}..${read.total} (${read.bytes} bytes${why})`;
}

/** The panel's notice when a run read the log again from the start; undefined otherwise. */
export function restartNotice(read: ReadInfo | undefined): string | undefined {
  switch (read?.restarted) {
    case 'truncated':
      return 'The log became shorter (truncated); it was read again from the start.';
    case 'replaced':
      return 'The log was replaced by another file; it was read again from the start.';
    case 'rewritten':
      return 'The log was rewritten in place (bytes already read changed); it was read again from the start.';
    case 'mapping':
      return 'The mapping file changed; the log was read again from the start.';
    default:
      return undefined;
  }
}

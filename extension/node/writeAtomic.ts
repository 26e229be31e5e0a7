/**
 * Atomic file writes for reports: write a temporary file beside the target, then rename it over the target, so a
 * crash or a full disk never leaves half a report. A failure removes the temporary file and says which file could
 * not be written and why, in one line.
 */
import { writeFileSync, renameSync, rmSync } from 'node:fs';

/** A file that could not be written: one plain line. */
export class WriteError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'WriteError';
  }
}

/** Write `text` to `file` atomically (temporary file in the same folder, then rename). Throws WriteError. */
export function writeAtomic(file: string, text: string): void {
  const tmp = `${file}.tmp-${process.pid}-${Date.now().toString(36)}`;
  try {
    writeFileSync(tmp, text, { flag: 'wx' });
    renameSync(tmp, file);
  } catch (e) {
    rmSync(tmp, { force: true });
    const err = e as NodeJS.ErrnoException;
    throw new WriteError(`cannot write ${file} (${err.code ?? 'error'}): ${String(err.message).split('\n')[0]}`);
  }
}

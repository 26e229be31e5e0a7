import { readFileSync } from 'node:fs';
import * as path from 'node:path';
import { bytesSource, readRun, textSource, type ByteSource, type ReadOptions } from '../../../extension/core/read/index';
import type { Diagnostic, NavLog } from '../../../extension/core/model';

/** Folder of the hand-written fixture logs. */
export const FIXTURES = path.resolve(__dirname, '../../fixtures/logs');
/** Folder of the mapping files for fixtures and real data. */
export const MAPS = path.resolve(__dirname, '../../fixtures/maps');

/** Read a fixture log (bytes as stored) in chunks of `chunkSize` bytes. */
export function readFixture(name: string, options: ReadOptions = {}, chunkSize = 1 << 16): Promise<NavLog> {
  const bytes = new Uint8Array(readFileSync(path.join(FIXTURES, name)));
  return readRun(bytesSource(name, bytes, chunkSize), options);
}

/** An `open` for ReadOptions over in-memory files keyed by name (paths are used as given). */
export function memoryFiles(files: Record<string, string>): (p: string) => ByteSource | undefined {
  return (p: string) => (p in files ? textSource(p, files[p], 5) : undefined);
}

/** Plain array of the first `n` values of a column (for toEqual). */
export function arr(a: ArrayLike<number> | undefined, n?: number): number[] {
  if (!a) return [];
  return Array.from(a).slice(0, n ?? a.length);
}

/** Diagnostics of one kind. */
export function kinds(log: NavLog, kind: Diagnostic['kind']): Diagnostic[] {
  return log.diagnostics.filter((d) => d.kind === kind);
}

/** Diagnostics that are warnings or errors. */
export function problems(log: NavLog): Diagnostic[] {
  return log.diagnostics.filter((d) => d.severity !== 'info');
}

/**
 * Public API of the log reader: every other module reads logs through these.
 *
 * - {@link readRun}: a run (main log + mapping + the mapping's other files) into a NavLog; never rejects for bad data.
 * - {@link readLogText}: the same from a string (tests, small inputs).
 * - {@link LogReader}: incremental reading of a growing file (push bytes, snapshot, finish).
 * - {@link readAnchors} / {@link parseAnchorsText}: anchor files; {@link parseMapping}: mapping files.
 * - {@link bytesSource} / {@link textSource}: in-memory ByteSources (`extension/node/fileSource.ts` gives files).
 */
export { readRun, readLogText, readAnchors, LogReader, FileIngest, bytesSource, textSource } from './run';
export type { ByteSource, ReadOptions, LogReaderOptions, AbortSignalLike } from './run';
export { parseMapping } from './mapping';
export type { Mapping, FileSpec, ColumnSpec, TimeSpec, ChannelSpec } from './mapping';
export { parseAnchorsText } from './anchors';
export { normalizeName, resolveName } from './names';
export type { Role } from './names';
export { parseWallClock } from './wallclock';
export { KNOWN_UNITS, unitFactor } from './units';
export type { UnitName } from './units';

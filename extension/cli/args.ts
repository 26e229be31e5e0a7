/**
 * Command-line options shared by the verbs (report-contract: analyze, check, compare). Parsing uses Node's own
 * `util.parseArgs` in strict mode, so an unknown option is a one-line error, never a stack trace.
 */
import { parseArgs } from 'node:util';

/** Options every verb accepts. */
export const COMMON_OPTIONS = {
  anchors: { type: 'string' },
  map: { type: 'string' },
  reference: { type: 'string' },
  json: { type: 'boolean' },
  out: { type: 'string' },
  confidence: { type: 'string' },
  'gate-prob': { type: 'string' },
  window: { type: 'string' },
  'imu-preset': { type: 'string' },
  'time-offset': { type: 'string' },
  'memory-budget': { type: 'string' },
  'reset-at': { type: 'string', multiple: true },
  'jump-factor': { type: 'string' },
  profile: { type: 'boolean' },
  html: { type: 'string' },
  md: { type: 'string' },
  help: { type: 'boolean', short: 'h' },
} as const;

/** A bad argument: printed as one line, exit 2. */
export class UsageError extends Error {}

/** Parse argv (after the verb) with the given extra options; throws UsageError with a plain sentence. */
export function parseVerbArgs<T extends Record<string, { type: 'string' | 'boolean'; short?: string; multiple?: boolean }>>(
  argv: string[],
  extra: T,
): { values: Record<string, string | boolean | string[] | undefined>; positionals: string[] } {
  try {
    const { values, positionals } = parseArgs({ args: argv, options: { ...COMMON_OPTIONS, ...extra }, allowPositionals: true, strict: true });
    return { values: values as Record<string, string | boolean | string[] | undefined>, positionals };
  } catch (e) {
    throw new UsageError((e as Error).message.split('\n')[0]);
  }
}

/** A finite number from an option, or a UsageError naming the option. */
export function numberOption(values: Record<string, unknown>, name: string, range?: [number, number]): number | undefined {
  const raw = values[name];
  if (raw === undefined) return undefined;
  const v = Number(raw);
  if (typeof raw !== 'string' || raw.trim() === '' || !Number.isFinite(v)) throw new UsageError(`--${name} needs a number, got '${String(raw)}'`);
  if (range && (v < range[0] || v > range[1])) throw new UsageError(`--${name} must lie in [${range[0]}, ${range[1]}], got ${v}`);
  return v;
}

/**
 * Build small NavLogs for the consistency tests directly from Float64Arrays (no reader involved).
 */
import type { Channel, NavLog } from '../../../extension/core/model';

/** What a test gives for one channel; everything but `t_s` and `nu` is optional. */
export interface ChannelInput {
  name?: string;
  dof?: number;
  t_s: ArrayLike<number>;
  /** `length * dof` innovations, row-major. */
  nu: ArrayLike<number>;
  /** `length * dof * dof` covariances, row-major. */
  S?: ArrayLike<number>;
  nisLogged?: ArrayLike<number>;
  /** Update id per record (strings are interned); undefined entries become NaN. */
  ids?: (string | undefined)[];
  rejected?: ArrayLike<number>;
  angleComponents?: boolean[];
  /** Line numbers; default 2, 3, 4, ... (a header on line 1). */
  line?: ArrayLike<number>;
}

/** Make one Channel. */
export function makeChannel(input: ChannelInput): Channel {
  const length = input.t_s.length;
  const dof = input.dof ?? 1;
  const dict: string[] = [];
  const id = new Float64Array(length).fill(NaN);
  if (input.ids) {
    const index = new Map<string, number>();
    input.ids.forEach((s, i) => {
      if (s === undefined) return;
      let k = index.get(s);
      if (k === undefined) { k = dict.length; dict.push(s); index.set(s, k); }
      id[i] = k;
    });
  }
  const line = input.line ? Float64Array.from(input.line) : Float64Array.from({ length }, (_, i) => i + 2);
  return {
    name: input.name ?? 'ch',
    dof,
    t_s: Float64Array.from(input.t_s),
    line,
    file: 'test.csv',
    length,
    nu: Float64Array.from(input.nu),
    S: input.S ? Float64Array.from(input.S) : undefined,
    nisLogged: input.nisLogged ? Float64Array.from(input.nisLogged) : undefined,
    id,
    ids: dict,
    rejected: input.rejected ? Uint8Array.from(input.rejected) : new Uint8Array(length),
    angleComponents: input.angleComponents ?? new Array<boolean>(dof).fill(false),
  };
}

/** Make a NavLog holding the given channels and an empty state stream. */
export function makeLog(channels: Channel[]): NavLog {
  return {
    path: 'test.csv',
    format: 'csv',
    rows: channels.reduce((s, c) => s + c.length, 0),
    meta: {},
    state: { t_s: new Float64Array(0), line: new Float64Array(0), file: 'test.csv', length: 0, columns: new Map() },
    channels,
    anchors: [],
    anchorIds: [],
    resets: [],
    files: ['test.csv'],
    conventions: { attitudeErrorSide: 'nav' },
    diagnostics: [],
  };
}

/**
 * Small invented logs for the notes tests (invented data, for tests of placement only) and a reader call.
 */
import type { NavLog } from '../../../extension/core/model';
import { readRun } from '../../../extension/core/read/index';

/** A wide CSV: state every 0.1 s from `t0` for `n` rows; a TDOA update on every other epoch (t = 0.2 k s), id `4-5` when t is a multiple of 0.4 s, else `1-2`. */
export function wideCsv(t0: number, n: number, preamble: string[] = []): string {
  const lines = [...preamble, 't,p_x,p_y,p_z,nu_tdoa,s_tdoa,id_tdoa'];
  for (let k = 0; k < n; k++) {
    const t = (t0 + k * 0.1).toFixed(2);
    // Updates and their ids follow the time, not the row, so a regenerated log has them at the same epochs.
    const g = Math.round(Number(t) * 10);
    const upd = ((g % 2) + 2) % 2 === 0 ? `,0.01,0.0004,${((g % 4) + 4) % 4 === 0 ? '4-5' : '1-2'}` : ',,,';
    lines.push(`${t},${(k * 0.01).toFixed(3)},0,1${upd}`);
  }
  return lines.join('\n') + '\n';
}

/** Read a CSV text with the project's reader. */
export async function readText(text: string, name = 'run.csv'): Promise<NavLog> {
  const bytes = new TextEncoder().encode(text);
  return readRun({
    name,
    size: bytes.byteLength,
    async *chunks() {
      yield bytes;
    },
  });
}

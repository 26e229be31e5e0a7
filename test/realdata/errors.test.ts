/**
 * Real data: the outdoor UWB run (RTK reference at 8 Hz, ESKF and least-squares outputs at 10 Hz) in
 * ../shared/data/uwb-outdoor-eskf-rtk. Expected RMSE: the upstream `RMSD_results.txt`, reproduced by the data's
 * source note (SOURCE_AND_LICENSE.md "Checked here") under its conventions: window from the first reference row
 * with x < 8.6 and y < -7 to the next row with x > 8.6 and y < -7; reference rows with |z| >= 0.5 dropped; linear
 * interpolation at each estimate time; 3-D error uses ref z + 1 m. The test derives the window and filters the
 * reference rows; alignment, interpolation, the +1 m offset and the RMSE are the tool's (analyzeErrors).
 */
import { describe, expect, it } from 'vitest';
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { analyzeErrors } from '../../extension/core/errors/index';
import { resolveSettings } from '../../extension/core/settings';
import type { ReferenceStream } from '../../extension/core/model';
import { navLog, stateStream } from '../core/errors/fixtures';

const dataDir = path.resolve(__dirname, '../../..', 'shared/data/uwb-outdoor-eskf-rtk');
const present = existsSync(path.join(dataDir, 'trajectory.csv'));
if (!present) console.log(`skipping real-data error tests: ${dataDir} is absent`);

/** Tiny local CSV parse (numeric, header row; the project's reader is tested on its own). */
function readCsv(file: string): { header: string[]; rows: number[][] } {
  const lines = readFileSync(path.join(dataDir, file), 'utf8').split(/\r?\n/).filter((l) => l.length > 0);
  return { header: lines[0].split(','), rows: lines.slice(1).map((l) => l.split(',').map(Number)) };
}

function estimateLog(file: string): ReturnType<typeof stateStream> {
  const { rows } = readCsv(file);
  // timestamp in ns -> s
  return stateStream(rows.map((r) => r[0] / 1e9), { p_x: rows.map((r) => r[1]), p_y: rows.map((r) => r[2]), p_z: rows.map((r) => r[3]) }, file);
}

function referenceWindow(): { ref: ReferenceStream; window: [number, number] } {
  const { rows } = readCsv('trajectory.csv');
  const i0 = rows.findIndex((r) => r[1] < 8.6 && r[2] < -7);
  let i1 = -1;
  for (let i = i0 + 1; i < rows.length; i++) if (rows[i][1] > 8.6 && rows[i][2] < -7) { i1 = i; break; }
  const kept = rows.slice(i0, i1 + 1).filter((r) => Math.abs(r[3]) < 0.5);
  const ref = stateStream(kept.map((r) => r[0] / 1e9), {
    p_x: kept.map((r) => r[1]), p_y: kept.map((r) => r[2]), p_z: kept.map((r) => r[3]),
  }, 'trajectory.csv');
  return { ref, window: [kept[0][0] / 1e9, kept[kept.length - 1][0] / 1e9] };
}

describe.skipIf(!present)('uwb-outdoor-eskf-rtk: RMSE against RTK reference', () => {
  const cases: [string, number, number][] = [
    // Source: RMSD_results.txt of the data set (ESKF 3D 0.79426 m, 2D 0.60034 m; LS 3D 0.79380 m, 2D 0.52172 m)
    ['ESKF.csv', 0.79426, 0.60034],
    ['LS.csv', 0.79380, 0.52172],
  ];
  it.each(cases)('%s', (file, rmse3d, rmse2d) => {
    const { ref, window } = referenceWindow();
    const log = navLog(estimateLog(file), ref);
    const settings = resolveSettings({ window, referenceOffset_m: [0, 0, 1] });
    const out = analyzeErrors(log, settings);
    const b = out.block;
    expect(b).toBeDefined();
    if (!b?.position) throw new Error('no position block');
    expect(Math.abs((b.position.rmse as number) - rmse3d)).toBeLessThan(1e-4);
    expect(Math.abs((b.position.rmse2d as number) - rmse2d)).toBeLessThan(1e-4);
    // every windowed epoch lies inside the reference span: nothing excluded, nothing interpolated across a gap
    expect(b.excluded).toBe(0);
    expect(b.epochs).toBe(b.position.epochs);
    expect(b.position.ate?.rmse).toBeLessThanOrEqual(b.position.rmse as number);
    expect(out.series.some((s) => s.key === 'trajectory/reference')).toBe(true);
  });
});

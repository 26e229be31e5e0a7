/**
 * Real data: the outdoor UWB run (RTK reference at 8 Hz, ESKF and least-squares outputs at 10 Hz) in
 * ../shared/data/uwb-outdoor-eskf-rtk, read as a run of several files by the project's reader (`readRun`) with
 * the mapping files in test/fixtures/maps (estimate + separate reference `trajectory.csv`, ns e-notation stamps).
 *
 * Expected RMSE: the data set's `RMSD_results.txt` (ESKF 3-D 0.79426 m, 2-D 0.60034 m; LS 3-D 0.79380 m,
 * 2-D 0.52172 m), reproduced by its source note (SOURCE_AND_LICENSE.md, "Checked here") under its conventions:
 * window from the first reference row with x < 8.6 and y < -7 to the next row with x > 8.6 and y < -7; reference
 * rows with |z| >= 0.5 dropped; linear interpolation at each estimate time; 3-D error uses ref z + 1 m. The test
 * derives the window and drops those rows; alignment, interpolation, the +1 m offset and the RMSE are the tool's.
 */
import { describe, expect, it } from 'vitest';
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { analyzeErrors } from '../../extension/core/errors/index';
import { readRun } from '../../extension/core/read/index';
import { fileByteSource, openRelative } from '../../extension/node/fileSource';
import { resolveSettings } from '../../extension/core/settings';
import type { NavLog, ReferenceStream } from '../../extension/core/model';

const root = path.resolve(__dirname, '../..');
const dataDir = path.resolve(root, '..', 'shared/data/uwb-outdoor-eskf-rtk');
const present = existsSync(path.join(dataDir, 'trajectory.csv'));
if (!present) console.log(`skipping real-data error tests: ${dataDir} is absent`);

async function readWithMap(file: string): Promise<NavLog> {
  const mapFile = path.join(root, 'test/fixtures/maps', `${file}.map.json`);
  // the mapping's relative paths name files beside the log, so it is presented as if it lay in the data folder
  return readRun(fileByteSource(path.join(dataDir, file)), {
    map: { text: readFileSync(mapFile, 'utf8'), name: path.join(dataDir, `${file}.map.json`) },
    open: openRelative,
  });
}

/** The source note's window, and the reference with its |z| >= 0.5 rows dropped (made unusable). */
function sourceNoteConventions(ref: ReferenceStream): { window: [number, number]; ref: ReferenceStream } {
  const x = ref.columns.get('p_x'), y = ref.columns.get('p_y'), z = ref.columns.get('p_z');
  if (!x || !y || !z) throw new Error('reference positions not read');
  let i0 = -1, i1 = -1;
  for (let i = 0; i < ref.length; i++) if (x[i] < 8.6 && y[i] < -7) { i0 = i; break; }
  for (let i = i0 + 1; i < ref.length; i++) if (x[i] > 8.6 && y[i] < -7) { i1 = i; break; }
  if (i0 < 0 || i1 < 0) throw new Error('window rows not found');
  const columns = new Map(ref.columns);
  const drop = (c: Float64Array): Float64Array => c.map((v, i) => (Math.abs(z[i]) >= 0.5 ? NaN : v));
  for (const k of ['p_x', 'p_y', 'p_z']) columns.set(k, drop(ref.columns.get(k) as Float64Array));
  return { window: [ref.t_s[i0], ref.t_s[i1]], ref: { ...ref, columns } };
}

describe.skipIf(!present)('uwb-outdoor-eskf-rtk: RMSE against the RTK reference (readRun + analyzeErrors)', () => {
  const cases: [string, number, number][] = [
    // Source: RMSD_results.txt of the data set (ESKF 3D 0.79426 m, 2D 0.60034 m; LS 3D 0.79380 m, 2D 0.52172 m)
    ['ESKF.csv', 0.79426, 0.60034],
    ['LS.csv', 0.79380, 0.52172],
  ];
  it.each(cases)('%s', async (file, rmse3d, rmse2d) => {
    const log = await readWithMap(file);
    expect(log.reference, 'reference stream read from trajectory.csv').toBeDefined();
    const { window, ref } = sourceNoteConventions(log.reference as ReferenceStream);
    const out = analyzeErrors({ ...log, reference: ref }, resolveSettings({ window, referenceOffset_m: [0, 0, 1] }));
    const b = out.block;
    if (!b?.position) throw new Error('no position block');
    expect(b.reference).toBe('reference');
    expect(Math.abs((b.position.rmse as number) - rmse3d)).toBeLessThan(1e-4);
    expect(Math.abs((b.position.rmse2d as number) - rmse2d)).toBeLessThan(1e-4);
    // every windowed epoch lies inside the reference span and no gap is longer than 5 reference steps
    expect(b.excluded).toBe(0);
    expect(b.epochs).toBe(b.position.epochs);
    expect(b.position.ate?.rmse as number).toBeLessThanOrEqual(b.position.rmse as number);
    expect(out.series.some((s) => s.key === 'trajectory/reference')).toBe(true);
  });

  it('the whole run: epochs after the reference ends are excluded and counted', async () => {
    const log = await readWithMap('ESKF.csv');
    const ref = log.reference as ReferenceStream;
    const out = analyzeErrors(log, resolveSettings({ referenceOffset_m: [0, 0, 1] }));
    const b = out.block;
    if (!b) throw new Error('no block');
    let outside = 0;
    for (let k = 0; k < log.state.length; k++) {
      const t = log.state.t_s[k];
      if (t < ref.t_s[0] || t > ref.t_s[ref.length - 1]) outside++;
    }
    expect(b.excludedOutsideSpan).toBe(outside);
    expect(b.epochs + b.excluded).toBe(log.state.length);
  });
});

// The real open data in ../shared/data (see each folder's SOURCE_AND_LICENSE.md) read through the mapping files in
// test/fixtures/maps. Row counts are `wc -l` of each file minus its header and footer lines (counted with
// `wc -l` and `grep -c` when these tests were written, and re-counted here from the file text); times, units and
// values are checked against the files themselves, the upstream READMEs and three.js (an outside library).
import { describe, expect, it } from 'vitest';
import { existsSync, readFileSync } from 'node:fs';
import * as path from 'node:path';
import { Euler, Quaternion } from 'three';
import { readRun } from '../../extension/core/read/index';
import { fileByteSource, openRelative } from '../../extension/node/fileSource';
import type { NavLog } from '../../extension/core/model';

const DATA = path.resolve(__dirname, '../../..', 'shared/data');
const MAPS = path.resolve(__dirname, '../fixtures/maps');
const present = existsSync(DATA);
if (!present) console.log(`Real-data reader tests skipped: ${DATA} is absent (the open data sets live outside the repo).`);

/** Read `file` (in DATA) with the mapping `map` (in test/fixtures/maps) placed as if beside the file. */
async function readWithMap(file: string, map: string): Promise<NavLog> {
  const full = path.join(DATA, file);
  return readRun(fileByteSource(full), {
    map: { text: readFileSync(path.join(MAPS, map), 'utf8'), name: `${full}.map.json` },
    open: openRelative,
  });
}

/** Data lines of a file: non-empty lines minus `header` lines at the top and `footer` at the end. */
function dataLines(file: string, header: number, footer = 0): number {
  const lines = readFileSync(path.join(DATA, file), 'utf8').split(/\r\n|\r|\n/).filter((l) => l.trim() !== '');
  return lines.length - header - footer;
}

function noErrors(log: NavLog): void {
  expect(log.diagnostics.filter((d) => d.severity === 'error')).toEqual([]);
  expect(log.diagnostics.filter((d) => d.kind === 'parse-error' || d.kind === 'bad-value' || d.kind === 'bad-rotation')).toEqual([]);
}

describe.skipIf(!present)('uwb-outdoor-eskf-rtk (Apache-2.0)', () => {
  it('ESKF.csv with the A*.csv ranges (anchor id and position columns) and the RTK trajectory as reference', async () => {
    const log = await readWithMap('uwb-outdoor-eskf-rtk/ESKF.csv', 'ESKF.csv.map.json');
    noErrors(log);
    // wc -l: ESKF 1873, A3 1539, A5 1688, A9 1692, A12 1730, trajectory 1481; one header line each.
    expect(log.state.length).toBe(1872);
    expect(log.state.length).toBe(dataLines('uwb-outdoor-eskf-rtk/ESKF.csv', 1));
    expect(log.ranges?.length).toBe(1538 + 1687 + 1691 + 1729);
    expect(log.reference?.length).toBe(1480);
    expect(log.rows).toBe(1872 + 6645 + 1480);
    // Nanosecond stamps to seconds: first and last ESKF stamps 1733037964834308684 and 1733038149854056086 ns.
    expect(log.state.t_s[0]).toBeCloseTo(1733037964.834308684, 5);
    expect(log.state.t_s[log.state.length - 1]).toBeCloseTo(1733038149.854056086, 5);
    // e-notation nanoseconds in trajectory.csv: 1.7330379647499617e+18 ns.
    expect(log.reference?.t_s[0]).toBeCloseTo(1733037964.7499617, 5);
    expect(log.reference?.columns.get('p_y')?.[0]).toBe(-4.27);
    // heading_degrees -> yaw in radians (second row: -0.014434669195371634 deg).
    expect(log.reference?.columns.get('yaw')?.[1]).toBeCloseTo(-0.014434669195371634 * Math.PI / 180, 15);
    // Anchor positions as the A*.csv files give them (field.x/y/z of their first rows).
    expect(log.anchors).toEqual([
      { id: '3', p: [2.21, 0.19, 1.79] }, { id: '5', p: [-0.36, -0.46, 1.97] },
      { id: '9', p: [0.71, -0.87, 0.61] }, { id: '12', p: [-0.05, 0.87, 0.5] },
    ]);
    // Ranges joined by time across the four files, each record naming its file.
    const r = log.ranges;
    expect(r).toBeDefined();
    if (!r) return;
    for (let i = 1; i < r.length; i++) expect(r.t_s[i]).toBeGreaterThanOrEqual(r.t_s[i - 1]);
    expect(new Set(Array.from(r.fileIndex ?? [])).size).toBe(4);
    // First A9 row: 1733037964615422482 ns, range 3.4145796666666666 m (the earliest range of the four files).
    expect(r.t_s[0]).toBeCloseTo(1733037964.615422482, 5);
    expect(r.r_m[0]).toBe(3.4145796666666666);
    expect(log.anchorIds[r.anchor[0]]).toBe('9');
    expect(log.files.map((f) => path.basename(f))).toEqual(
      ['ESKF.csv', 'A3.csv', 'A5.csv', 'A9.csv', 'A12.csv', 'trajectory.csv', 'ESKF.csv.map.json']);
  });

  it('LS.csv with the same reference', async () => {
    const log = await readWithMap('uwb-outdoor-eskf-rtk/LS.csv', 'LS.csv.map.json');
    noErrors(log);
    expect(log.state.length).toBe(1714); // wc -l 1715 minus the header
    expect(log.state.t_s[0]).toBeCloseTo(1733037964.76935293, 5);
    expect(log.state.t_s[1713]).toBeCloseTo(1733038146.568772593, 5);
    expect(log.state.columns.get('p_z')?.[0]).toBe(1.1826165051206474);
  });

  for (const [file, rows, mean, std] of [
    ['2m.csv', 89, 1.9311622696629214, 0.029771670254532867],
    ['10m.csv', 90, 10.079472988888888, 0.027021913470489416],
  ] as const) {
    it(`static ${file}: footer rows left out; the ranges reproduce the file's own "Distance Mean" and "Distance Std"`, async () => {
      const log = await readWithMap(`uwb-outdoor-eskf-rtk/static_LOS_height_100.0cm/${file}`, 'static-range.csv.map.json');
      noErrors(log);
      // wc -l (96 / 97) minus 1 header and 6 footer rows (Distance/RSSI/RSSI_fp Mean and Std).
      expect(log.ranges?.length).toBe(rows);
      expect(rows).toBe(dataLines(`uwb-outdoor-eskf-rtk/static_LOS_height_100.0cm/${file}`, 1, 6));
      const r = Array.from(log.ranges?.r_m ?? []);
      const m = r.reduce((a, b) => a + b, 0) / r.length;
      const s = Math.sqrt(r.reduce((a, b) => a + (b - m) ** 2, 0) / (r.length - 1)); // ddof = 1, as the footer
      expect(m).toBeCloseTo(mean, 12);
      expect(s).toBeCloseTo(std, 12);
      expect(log.anchorIds).toEqual(['12']); // anchor_id column "12.0"
      expect(log.diagnostics.find((d) => d.kind === 'note')?.message).toContain('footer');
    });
  }
});

describe.skipIf(!present)('uwb-planar-mocap (MIT)', () => {
  it('header-less UWB ranges with wall-clock times and dropouts, motion capture as reference', async () => {
    const log = await readWithMap('uwb-planar-mocap/UWB_dynamic_exp_mid.csv', 'UWB_dynamic_exp_mid.csv.map.json');
    noErrors(log);
    // 12908 rows (wc -l, no header) x 24 ranges, minus the 6 empty cells (dropouts) counted with awk.
    expect(log.rows).toBe(12908 + 16069);
    expect(log.ranges?.length).toBe(12908 * 24 - 6);
    expect(log.anchorIds).toHaveLength(24);
    // "2022-08-15 9:37:27.039" read in Asia/Shanghai (UTC+8, no daylight saving since 1991; from memory) is
    // 01:37:27.039 UTC; the last row 9:39:36.138 gives the 129.099 s span the README's 129 s describes.
    const t = log.ranges?.t_s ?? new Float64Array(0);
    expect(t[0]).toBeCloseTo(Date.UTC(2022, 7, 15, 1, 37, 27, 39) / 1000, 6);
    expect(t[t.length - 1] - t[0]).toBeCloseTo(129.099, 6);
    expect(log.ranges?.r_m[0]).toBe(4.09);
    expect(log.anchorIds[log.ranges?.anchor[1] ?? -1]).toBe('a0-t1');
    // Motion capture: 16070 lines minus the header "time,x,y,z,rotation,,," whose empty names are col_6..col_8.
    const ref = log.reference;
    expect(ref?.length).toBe(16069);
    expect(ref?.length).toBe(dataLines('uwb-planar-mocap/motion_capture_dynamic_exp_mid.csv', 1));
    expect(ref?.columns.get('p_x')?.[0]).toBe(0.290801555);
    // Mapped as x,y,z,w (SOURCE_AND_LICENSE.md: that order fits the ranges better): w is the 4th number.
    expect(ref?.columns.get('q_w')?.[0]).toBeCloseTo(-0.005036321 / Math.hypot(0.006027777, 0.999901712, 0.011617941, -0.005036321), 6);
    expect(ref?.t_s[0]).toBeCloseTo(Date.UTC(2022, 7, 15, 1, 37, 25, 803) / 1000, 6);
  });

  it('the static run: 10635 header-less rows', async () => {
    const log = await readWithMap('uwb-planar-mocap/UWB_static_exp_8_14_pos1_deg_0.csv', 'UWB_static.csv.map.json');
    noErrors(log);
    expect(log.rows).toBe(10635);
    expect(log.ranges?.length).toBe(10635 * 24 - 18); // 18 empty cells (awk)
    const t = log.ranges?.t_s ?? new Float64Array(0);
    // 11:43:11.724 to 11:45:05.723: 113.999 s (the README's ~114 s).
    expect(t[t.length - 1] - t[0]).toBeCloseTo(113.999, 6);
  });
});

describe.skipIf(!present)('imu-quadrotor-rtk (CC BY 4.0)', () => {
  for (const k of [1, 2, 3, 4]) {
    it(`IMU_${k}.csv: degrees and deg/s to SI, Euler to quaternion, RTK GT.csv (NED) as reference`, async () => {
      const file = `imu-quadrotor-rtk/IMU_${k}.csv`;
      const log = await readWithMap(file, 'IMU.csv.map.json');
      noErrors(log);
      expect(log.state.length).toBe(2461); // wc -l 2462 minus the header
      expect(log.imu?.length).toBe(2461);
      expect(log.reference?.length).toBe(206); // GT.csv: wc -l 207 minus the header
      expect(log.frame).toBe('NED');
      expect(log.state.t_s[2460]).toBeCloseTo(20.49918, 10);
      expect(log.reference?.t_s[205]).toBeCloseTo(20.5, 10);
      const rows = readFileSync(path.join(DATA, file), 'utf8').split('\n')[1].split(',').map(Number);
      // Gyr_X in deg/s -> rad/s; Acc in m/s^2 unchanged.
      expect(log.imu?.gyro_x[0]).toBeCloseTo(rows[7] * Math.PI / 180, 14);
      expect(log.imu?.acc_z[0]).toBe(rows[6]);
      // Euler_X/Y/Z (deg) as roll/pitch/yaw, ZYX: compare with three.js's quaternion of the same angles.
      const deg = Math.PI / 180;
      const ref = new Quaternion().setFromEuler(new Euler(rows[1] * deg, rows[2] * deg, rows[3] * deg, 'ZYX'));
      const q = ['q_w', 'q_x', 'q_y', 'q_z'].map((c) => log.state.columns.get(c)?.[0] ?? NaN);
      const dot = Math.abs(q[0] * ref.w + q[1] * ref.x + q[2] * ref.y + q[3] * ref.z);
      expect(dot).toBeCloseTo(1, 12);
      // GT.csv: North/East/Down -> p_x/p_y/p_z; second row North -0.19689739311082397.
      expect(log.reference?.columns.get('p_x')?.[1]).toBe(-0.19689739311082397);
    });
  }
});

// Every CSV form of the log conventions (/work/shared/spec/log-conventions.md, "Files" and "Names"), on small
// hand-written fixtures in test/fixtures/logs whose numbers were worked out by hand (noted beside each check).
import { describe, expect, it } from 'vitest';
import { Quaternion, Euler, Matrix4 } from 'three';
import { arr, kinds, problems, readFixture } from './helpers';

describe('wide CSV with state, ground truth, a channel and metadata (wide-basic.csv)', () => {
  for (const chunk of [1, 7, 1 << 16]) {
    it(`reads the same with ${chunk}-byte chunks`, async () => {
      const log = await readFixture('wide-basic.csv', {}, chunk);
      expect(log.format).toBe('csv');
      expect(log.rows).toBe(4);
      expect(log.frame).toBe('NED');
      expect(log.source).toEqual({ path: 'src/filter/update.cpp', line: 120 });
      expect(log.meta.frame).toBe('NED');
      // Anchors from metadata: "# anchor 5: 24 0 5.7" and "# anchor 6: -1.5, 2, 3".
      expect(log.anchors).toEqual([{ id: '5', p: [24, 0, 5.7] }, { id: '6', p: [-1.5, 2, 3] }]);
      // State rows are the rows with any state column: lines 6, 7 and 9 (line 8 holds only an update).
      const s = log.state;
      expect(s.length).toBe(3);
      expect(arr(s.line)).toEqual([6, 7, 9]);
      expect(arr(s.t_s)).toEqual([0, 0.01, 0.03]);
      expect(arr(s.columns.get('p_x'))).toEqual([1, 1.5, 2]);
      expect(arr(s.columns.get('bg_z'))).toEqual([0.003, 0.003, 0.003]);
      // std_ is a sigma; var_p_z = 0.49 m^2 -> sigma 0.7 m.
      expect(arr(s.columns.get('sigma_p_y'))).toEqual([0.6, 0.6, 0.6]);
      expect(s.columns.get('sigma_p_z')?.[0]).toBeCloseTo(0.7, 15);
      // true_ is ground truth like gt_.
      expect(arr(s.columns.get('gt_p_y'))).toEqual([2.1, 2.6, 3.1]);
      expect(s.columns.get('q_z')?.[1]).toBeCloseTo(Math.SQRT1_2, 15);
      // The channel gets the rows with a finite innovation: lines 7, 8, 9.
      expect(log.channels.map((c) => c.name)).toEqual(['tdoa']);
      const c = log.channels[0];
      expect(c.dof).toBe(1);
      expect(arr(c.line)).toEqual([7, 8, 9]);
      expect(arr(c.nu)).toEqual([0.2, -0.1, 0.3]);
      expect(arr(c.S)).toEqual([0.04, 0.04, 0.09]);
      expect(c.ids).toEqual(['4-5', '5-6']);
      expect(arr(c.id)).toEqual([0, 1, 0]);
      expect(Array.from(c.rejected)).toEqual([0, 1, 0]);
      expect(c.nisLogged && arr(c.nisLogged).every(Number.isNaN)).toBe(true);
      expect(log.diagnostics).toEqual([]);
    });
  }
});

describe('separators, line ends, BOM and time units', () => {
  it('semicolons, CRLF, time_ms and the px/pos_y/position_z aliases', async () => {
    const log = await readFixture('semicolon-crlf-ms.csv', {}, 3);
    expect(arr(log.state.t_s)).toEqual([1, 1.01]);
    expect(arr(log.state.columns.get('p_x'))).toEqual([1.5, 1.25]);
    expect(arr(log.state.columns.get('p_z'))).toEqual([3, 3]);
    expect(arr(log.state.line)).toEqual([2, 3]);
    expect(problems(log)).toEqual([]);
  });

  it('tabs, CR-only line ends, a UTF-8 BOM, timestamp_us and x y z', async () => {
    for (const chunk of [1, 2, 5, 100]) {
      const log = await readFixture('tab-cr-bom-us.csv', {}, chunk);
      expect(arr(log.state.t_s)).toEqual([1, 1.001]);
      expect(arr(log.state.columns.get('p_x'))).toEqual([1, 4]);
      expect(arr(log.state.columns.get('p_z'))).toEqual([3, 6]);
      expect(arr(log.state.line)).toEqual([2, 3]);
      expect(problems(log)).toEqual([]);
    }
  });
});

describe('missing and non-finite values, empty header names (nan-inf-empty-header.csv)', () => {
  it('reads nan/-nan/empty as no value and inf/-Infinity as bad values with their line and column', async () => {
    const log = await readFixture('nan-inf-empty-header.csv');
    expect(arr(log.state.columns.get('p_x')).every(Number.isNaN)).toBe(true);
    expect(arr(log.state.columns.get('p_y'))).toEqual([1, 2, 3]);
    expect(arr(log.state.columns.get('p_z'))).toEqual([NaN, 3, 4]);
    const bad = kinds(log, 'bad-value');
    expect(bad.map((d) => [d.file, d.line, d.column])).toEqual([
      ['nan-inf-empty-header.csv', 3, 3],
      ['nan-inf-empty-header.csv', 4, 3],
    ]);
    // The empty 4th header cell is named col_4 and reported as not a convention name (header line 1, column 11).
    const unknown = kinds(log, 'unknown-column');
    expect(unknown).toHaveLength(1);
    expect(unknown[0]).toMatchObject({ severity: 'info', line: 1, column: 11 });
    expect(unknown[0].message).toContain('col_4');
  });
});

describe('attitude forms are stored as Hamilton q_w..q_z (nav_R_body)', () => {
  it('rotation matrices (row-major r_11..r_33): identity, a 90 degree yaw, and a matrix with det 2 dropped', async () => {
    const log = await readFixture('attitude-matrix.csv');
    const q = ['q_w', 'q_x', 'q_y', 'q_z'].map((k) => arr(log.state.columns.get(k)));
    expect(q.map((c) => c[0])).toEqual([1, 0, 0, 0]);
    // Rz(90 deg) = [[0,-1,0],[1,0,0],[0,0,1]] is q = (cos 45, 0, 0, sin 45) (hand-checked).
    expect(q[0][1]).toBeCloseTo(Math.SQRT1_2, 12);
    expect(q[3][1]).toBeCloseTo(Math.SQRT1_2, 12);
    expect(q.map((c) => c[2]).every(Number.isNaN)).toBe(true);
    const bad = kinds(log, 'bad-rotation');
    expect(bad).toHaveLength(1);
    expect(bad[0]).toMatchObject({ line: 4, file: 'attitude-matrix.csv' });
    expect(bad[0].message).toContain('left out');
  });

  it('ZYX Euler angles in degrees (_deg) and radians give the quaternion of Rz(yaw) Ry(pitch) Rx(roll)', async () => {
    const log = await readFixture('attitude-euler-deg.csv');
    const col = (k: string) => arr(log.state.columns.get(k));
    // yaw 90 deg: (cos 45, 0, 0, sin 45); roll 90 deg: (cos 45, sin 45, 0, 0) (hand-checked).
    expect(col('q_w')[0]).toBeCloseTo(Math.SQRT1_2, 12);
    expect(col('q_z')[0]).toBeCloseTo(Math.SQRT1_2, 12);
    expect(col('q_x')[1]).toBeCloseTo(Math.SQRT1_2, 12);
    expect(col('gt_q_z')[0]).toBeCloseTo(Math.SQRT1_2, 12);
    expect(col('gt_q_w')[1]).toBe(1);
    expect(log.state.columns.has('roll')).toBe(false);
  });

  it('agrees with three.js Euler order ZYX for arbitrary angles', async () => {
    // Source: three.js (devDependency) Quaternion.setFromEuler; its Euler order 'ZYX' is the matrix Rz Ry Rx.
    const angles = [[0.3, -0.2, 2.5], [-1.2, 0.7, -3.0], [2.9, 1.4, 0.1]];
    const text = ['t,roll,pitch,yaw', ...angles.map((a, k) => `${k},${a.join(',')}`)].join('\n');
    const { readLogText } = await import('../../../extension/core/read/index');
    const log = await readLogText(text, 'euler.csv');
    angles.forEach(([roll, pitch, yaw], k) => {
      const ref = new Quaternion().setFromEuler(new Euler(roll, pitch, yaw, 'ZYX'));
      const sign = Math.sign(ref.w * (log.state.columns.get('q_w')?.[k] ?? 0)) || 1;
      expect(log.state.columns.get('q_w')?.[k]).toBeCloseTo(sign * ref.w, 12);
      expect(log.state.columns.get('q_x')?.[k]).toBeCloseTo(sign * ref.x, 12);
      expect(log.state.columns.get('q_y')?.[k]).toBeCloseTo(sign * ref.y, 12);
      expect(log.state.columns.get('q_z')?.[k]).toBeCloseTo(sign * ref.z, 12);
    });
  });

  it('agrees with three.js for rotation matrices', async () => {
    // Source: three.js Quaternion.setFromRotationMatrix (the matrix read row by row as R_ij).
    const q0 = new Quaternion(0.1, -0.7, 0.3, 0.6).normalize();
    const m = new Matrix4().makeRotationFromQuaternion(q0).elements; // column-major
    const r = [m[0], m[4], m[8], m[1], m[5], m[9], m[2], m[6], m[10]];
    const { readLogText } = await import('../../../extension/core/read/index');
    const log = await readLogText(`t,r_11,r_12,r_13,r_21,r_22,r_23,r_31,r_32,r_33\n0,${r.join(',')}\n`, 'mat.csv');
    const sign = Math.sign(q0.w);
    expect(log.state.columns.get('q_w')?.[0]).toBeCloseTo(sign * q0.w, 12);
    expect(log.state.columns.get('q_x')?.[0]).toBeCloseTo(sign * q0.x, 12);
    expect(log.state.columns.get('q_y')?.[0]).toBeCloseTo(sign * q0.y, 12);
    expect(log.state.columns.get('q_z')?.[0]).toBeCloseTo(sign * q0.z, 12);
  });
});

describe('channels (channel-matrix.csv)', () => {
  it('builds S from whichever triangle is given, zero elsewhere, and takes NIS-only and innov_ channels', async () => {
    const log = await readFixture('channel-matrix.csv');
    const g = log.channels.find((c) => c.name === 'gnss_vel');
    const m = log.channels.find((c) => c.name === 'mag');
    expect(g?.dof).toBe(3);
    expect(arr(g?.line)).toEqual([2, 4]);
    expect(arr(g?.nu)).toEqual([0.1, 0.2, 0.3, 0.4, NaN, 0.6]);
    // s_0_1 = 1 and s_2_0 = 2 mirrored (hand-checked); second update: identity.
    expect(arr(g?.S)).toEqual([4, 1, 2, 1, 9, 0, 2, 0, 16, 1, 0, 0, 0, 1, 0, 0, 0, 1]);
    expect(m?.dof).toBe(1);
    expect(arr(m?.line)).toEqual([3, 4]);
    expect(arr(m?.nu)).toEqual([NaN, 0.5]);
    expect(arr(m?.nisLogged)).toEqual([3.5, NaN]);
    expect(problems(log)).toEqual([]);
  });
});

describe('raw sensors, ranges and resets (raw-sensors.csv)', () => {
  it('reads IMU, TDOA, range_id + range, range_<anchor> and reset columns', async () => {
    const log = await readFixture('raw-sensors.csv');
    expect(log.imu?.length).toBe(2);
    expect(arr(log.imu?.acc_z)).toEqual([9.8, 9.81]);
    expect(arr(log.imu?.mag_x)).toEqual([20, NaN]);
    expect(log.anchorIds).toEqual(['4', '5', '7', 'A', '3']);
    expect(arr(log.tdoa?.i)).toEqual([0, 4]);
    expect(arr(log.tdoa?.j)).toEqual([1, 0]);
    expect(arr(log.tdoa?.d_m)).toEqual([0.83, -0.5]);
    expect(arr(log.ranges?.anchor)).toEqual([1, 2, 3, 2]);
    expect(arr(log.ranges?.r_m)).toEqual([7.42, 3.5, 8.0, 3.6]);
    expect(arr(log.ranges?.line)).toEqual([2, 2, 3, 4]);
    expect(log.resets).toEqual([0.01]);
    expect(log.state.length).toBe(0);
    expect(problems(log)).toEqual([]);
  });
});

describe('columns of cells in a quoted record', () => {
  it('a bad cell after a quoted cell is placed where it stands in the line, quotes counted', async () => {
    const { readLogText } = await import('../../../extension/core/read/index');
    // Row 2 as written: 1,"a ""q"" id",abc,0.04 -- counted by hand: the quoted cell spans columns 3-14, its
    // delimiter is column 15, so "abc" starts at column 16 (the unquoted cell text is only 8 characters long).
    const log = await readLogText('t,id_tdoa,nu_tdoa,s_tdoa\n1,"a ""q"" id",abc,0.04\n', 'aisle.csv');
    const pe = kinds(log, 'parse-error');
    expect(pe).toHaveLength(1);
    expect(pe[0]).toMatchObject({ line: 2, column: 16 });
  });
  it('cellStartColumns counts code points and keeps delimiters inside quotes', async () => {
    const { cellStartColumns } = await import('../../../extension/core/read/csv');
    expect(cellStartColumns('1,"2,5",x', ',')).toEqual([1, 3, 9]);
    expect(cellStartColumns('"é",x', ',')).toEqual([1, 5]); // é is one code point (two UTF-8 bytes)
    expect(cellStartColumns('"say ""hi""";z', ';')).toEqual([1, 14]);
  });
});

describe('quoted records go through papaparse (quoted.csv)', () => {
  for (const chunk of [1, 4, 1 << 16]) {
    it(`keeps quoted delimiters, doubled quotes and a quoted line break (${chunk}-byte chunks)`, async () => {
      const log = await readFixture('quoted.csv', {}, chunk);
      const c = log.channels[0];
      expect(arr(c.line)).toEqual([2, 3, 4, 6]);
      expect(c.ids).toEqual(['4-5', 'a "quoted" id', 'multi\nline', 'plain']);
      // Line 3's only state cell is not a number, so that row holds no state record.
      expect(arr(log.state.columns.get('p_x'))).toEqual([1.5, 3.5, 4.5]);
      expect(arr(log.state.line)).toEqual([2, 4, 6]);
      // "2,5" is a quoted cell that is not a number: a parse error on line 3.
      const pe = kinds(log, 'parse-error');
      expect(pe).toHaveLength(1);
      expect(pe[0]).toMatchObject({ line: 3, severity: 'error', file: 'quoted.csv' });
      expect(log.rows).toBe(4);
    });
  }
});

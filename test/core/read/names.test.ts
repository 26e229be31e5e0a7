// Every name and alias of the conventions table (/work/shared/spec/log-conventions.md, "Names"), with case and the
// `_ . -` separators varied, resolved to its canonical role; and each read end to end from a one-row log.
import { describe, expect, it } from 'vitest';
import { normalizeName, readLogText, resolveName } from '../../../extension/core/read/index';

const STATE_ALIASES: [string, string][] = [
  ['p_x', 'p_x'], ['px', 'p_x'], ['pos_x', 'p_x'], ['position_x', 'p_x'], ['x', 'p_x'], ['Pos.Y', 'p_y'], ['POSITION-Z', 'p_z'],
  ['v_x', 'v_x'], ['vx', 'v_x'], ['vel_x', 'v_x'], ['velocity_x', 'v_x'], ['Vel-Z', 'v_z'],
  ['q_w', 'q_w'], ['qw', 'q_w'], ['quat_w', 'q_w'], ['QUAT.X', 'q_x'],
  ['r_11', 'r_11'], ['R_23', 'r_23'], ['r_33', 'r_33'],
  ['roll', 'roll'], ['pitch', 'pitch'], ['yaw', 'yaw'],
  ['bg_x', 'bg_x'], ['bias_gyro_x', 'bg_x'], ['gyro_bias_y', 'bg_y'], ['b_g_z', 'bg_z'],
  ['ba_x', 'ba_x'], ['bias_acc_x', 'ba_x'], ['acc_bias_y', 'ba_y'], ['b_a_z', 'ba_z'],
  ['sigma_p_x', 'sigma_p_x'], ['std_vel_y', 'sigma_v_y'], ['sigma_att_x', 'sigma_att_x'], ['std-att-z', 'sigma_att_z'],
  ['gt_p_x', 'gt_p_x'], ['true_pos_y', 'gt_p_y'], ['gt_q_w', 'gt_q_w'], ['TRUE.V.Z', 'gt_v_z'],
];

describe('names of the log conventions', () => {
  it.each(STATE_ALIASES)('%s is the state column %s', (name, canonical) => {
    const r = resolveName(normalizeName(name));
    expect(r).toMatchObject({ kind: 'state', name: canonical });
  });

  it.each([['t', 1], ['time', 1], ['timestamp', 1], ['stamp', 1], ['t_s', 1], ['time_ms', 1e-3], ['Stamp.US', 1e-6], ['timestamp-ns', 1e-9]])(
    '%s is the time with factor %d', (name, factor) => {
      expect(resolveName(normalizeName(name as string))).toEqual({ kind: 'time', scale: factor });
    });

  it('degrees, variances, channels, raw sensors', () => {
    const r = (n: string) => resolveName(normalizeName(n));
    expect(r('yaw_deg')).toEqual({ kind: 'state', name: 'yaw', scale: Math.PI / 180 });
    expect(r('var_p_x')).toEqual({ kind: 'state', name: 'sigma_p_x', scale: 1, variance: true });
    expect(r('nu_tdoa')).toEqual({ kind: 'nu', channel: 'tdoa', index: 0 });
    expect(r('nu_gnss_vel_1')).toEqual({ kind: 'nu', channel: 'gnss_vel', index: 1 });
    expect(r('innov_mag_2')).toEqual({ kind: 'nu', channel: 'mag', index: 2 });
    expect(r('s_mag_0_2')).toEqual({ kind: 's', channel: 'mag', i: 0, j: 2 });
    expect(r('s_tdoa')).toEqual({ kind: 's', channel: 'tdoa', i: -1, j: -1 });
    expect(r('nis_tdoa')).toEqual({ kind: 'nis', channel: 'tdoa' });
    expect(r('id_tdoa')).toEqual({ kind: 'id', channel: 'tdoa' });
    expect(r('rejected_tdoa')).toEqual({ kind: 'rejected', channel: 'tdoa' });
    expect(r('gyro_x')).toEqual({ kind: 'imu', name: 'gyro_x', scale: 1 });
    expect(r('ACC.Y')).toEqual({ kind: 'imu', name: 'acc_y', scale: 1 });
    expect(r('mag_z')).toEqual({ kind: 'imu', name: 'mag_z', scale: 1 });
    expect(r('tdoa_i')).toEqual({ kind: 'tdoa_i' });
    expect(r('tdoa')).toEqual({ kind: 'tdoa' });
    expect(r('range_id')).toEqual({ kind: 'range_id' });
    expect(r('range_A7')).toEqual({ kind: 'range', anchor: 'a7' });
    expect(r('reset')).toEqual({ kind: 'reset' });
    expect(r('speed')).toBeUndefined();
    expect(r('att_x')).toBeUndefined();
  });

  it('reads the aliases end to end', async () => {
    const names = STATE_ALIASES.filter(([, c]) => !/^(r_|roll|pitch|yaw|q_|gt_q)/.test(c));
    const seen = new Set<string>();
    const cols = names.filter(([, c]) => (seen.has(c) ? false : (seen.add(c), true)));
    const text = `Timestamp_MS,${cols.map(([n]) => n).join(',')}\n1500,${cols.map((_, k) => k + 1).join(',')}\n`;
    const log = await readLogText(text, 'aliases.csv');
    expect(log.state.t_s[0]).toBe(1.5);
    cols.forEach(([, canonical], k) => expect(log.state.columns.get(canonical)?.[0]).toBe(k + 1));
    expect(log.diagnostics).toEqual([]);
  });

  it('range_<anchor> keeps the anchor id as written', async () => {
    const log = await readLogText('t,range_A7,Range-b2\n0,1.5,2.5\n', 'r.csv');
    expect(log.anchorIds).toEqual(['A7', 'b2']);
  });
});

// JSON Lines and JSON forms of the log conventions (/work/shared/spec/log-conventions.md, "JSON records"),
// on hand-written fixtures in test/fixtures/logs (numbers hand-checked beside each assertion).
import { describe, expect, it } from 'vitest';
import { readLogText } from '../../../extension/core/read/index';
import { arr, kinds, readFixture } from './helpers';

describe('JSON Lines records of every kind (records.jsonl)', () => {
  for (const chunk of [1, 9, 1 << 16]) {
    it(`reads state, update, imu, tdoa, range and reset records (${chunk}-byte chunks)`, async () => {
      const log = await readFixture('records.jsonl', {}, chunk);
      expect(log.format).toBe('jsonl');
      expect(log.rows).toBe(8);
      const s = log.state;
      expect(arr(s.line)).toEqual([1, 8]);
      expect(arr(s.t_s)).toEqual([12.34, 12.44]);
      expect(arr(s.columns.get('p_x'))).toEqual([1, 1.5]);
      // Infinity is a bad value (treated as missing), reported on its line.
      expect(arr(s.columns.get('p_z'))).toEqual([3, NaN]);
      expect(kinds(log, 'bad-value').map((d) => d.line)).toEqual([8]);
      expect(arr(s.columns.get('sigma_att_z'))).toEqual([0.02, NaN]);
      expect(arr(s.columns.get('sigma_v_y'))).toEqual([0.1, NaN]);
      expect(arr(s.columns.get('gt_p_y'))).toEqual([2.1, NaN]);
      expect(arr(s.columns.get('gt_q_w'))).toEqual([1, NaN]);
      expect(arr(s.columns.get('q_y'))).toEqual([0, 0.5]);
      expect(arr(s.columns.get('bg_z'))).toEqual([0.003, NaN]);
      expect(s.P?.states).toEqual(['p_x', 'p_y']);
      expect(arr(s.P?.matrix)).toEqual([0.25, 0.01, 0.01, 0.25, NaN, NaN, NaN, NaN]);
      const c = log.channels[0];
      expect(c.name).toBe('tdoa');
      expect(arr(c.line)).toEqual([2, 7]);
      expect(arr(c.nu)).toEqual([0.12, NaN]);
      expect(arr(c.S)).toEqual([0.01, NaN]);
      expect(arr(c.nisLogged)).toEqual([NaN, 2.5]);
      expect(Array.from(c.rejected)).toEqual([0, 1]);
      expect(c.ids).toEqual(['4-5', '5-6']);
      expect(arr(log.imu?.acc_z)).toEqual([9.8]);
      expect(log.anchorIds).toEqual(['4', '5']);
      expect(arr(log.tdoa?.d_m)).toEqual([0.83]);
      expect(arr(log.ranges?.r_m)).toEqual([7.42]);
      expect(arr(log.ranges?.anchor)).toEqual([1]);
      expect(log.resets).toEqual([12.4]);
      expect(log.diagnostics.filter((d) => d.severity === 'error')).toEqual([]);
    });
  }

  it('reports a line that is not JSON with its line and column', async () => {
    const log = await readLogText('{"t": 1, "p": [1, 2, 3]}\n{"t": 2, "p": [1, 2 3]}\n', 'bad.jsonl');
    const pe = kinds(log, 'parse-error');
    expect(pe).toHaveLength(1);
    // column 21 is the "3" after the missing comma (hand-counted).
    expect(pe[0]).toMatchObject({ file: 'bad.jsonl', line: 2, column: 21 });
    expect(log.state.length).toBe(1);
  });
});

describe('JSON documents', () => {
  it('an array of records: each record keeps the line of its opening brace (records-array.json)', async () => {
    for (const chunk of [1, 13, 1 << 16]) {
      const log = await readFixture('records-array.json', {}, chunk);
      expect(log.format).toBe('json');
      expect(arr(log.state.line)).toEqual([2, 3]);
      expect(arr(log.state.columns.get('p_z'))).toEqual([0, 3]);
      const mag = log.channels[0];
      expect(mag.dof).toBe(3);
      expect(arr(mag.line)).toEqual([7]);
      expect(arr(mag.S)).toEqual([1, 0, 0, 0, 1, 0, 0, 0, 1]);
      expect(log.diagnostics).toEqual([]);
    }
  });

  it('{meta, records} with NaN tokens (records-meta.json)', async () => {
    const log = await readFixture('records-meta.json', {}, 5);
    expect(log.frame).toBe('ENU');
    expect(log.source).toEqual({ path: 'src/ekf.cpp', line: 77 });
    expect(log.anchors).toEqual([{ id: '0', p: [0.3, 0.3, 7.8] }]);
    expect(arr(log.state.line)).toEqual([4, 5]);
    expect(arr(log.state.columns.get('p_z'))).toEqual([7, NaN]);
    expect(log.diagnostics).toEqual([]);
  });

  it('reports a broken record with the line and column inside the document', async () => {
    const text = '[\n  {"t": 1, "p": [1, 2, 3]},\n  {"t": 2,\n   "p": [1, 2, 3]]\n  }\n]\n';
    const log = await readLogText(text, 'broken.json');
    const pe = kinds(log, 'parse-error');
    expect(pe.length).toBeGreaterThanOrEqual(1);
    // The record opening on line 3 is broken at the stray "]" on line 4, column 18 (hand-counted).
    expect(pe[0]).toMatchObject({ file: 'broken.json', line: 4, column: 18 });
  });

  it('reports a document cut short', async () => {
    const log = await readLogText('[\n {"t": 1, "p": [1, 2, 3]},\n {"t": 2', 'cut.json');
    expect(log.state.length).toBe(1);
    const pe = kinds(log, 'parse-error');
    expect(pe).toHaveLength(1);
    expect(pe[0].line).toBe(3);
    expect(pe[0].message).toContain('cut short');
  });

  it('a JSON covariance that is not symmetric positive definite is a bad-covariance', async () => {
    const text = [
      '{"t": 0, "p": [0, 0, 0], "P": {"states": ["p_x", "p_y"], "matrix": [[1, 0.5], [0.4, 1]]}}',
      '{"t": 1, "p": [0, 0, 0], "P": {"states": ["p_x", "p_y"], "matrix": [[1, 2], [2, 1]]}}',
    ].join('\n');
    const log = await readLogText(text, 'p.jsonl');
    const bc = kinds(log, 'bad-covariance');
    expect(bc.map((d) => d.line)).toEqual([1, 2]);
    expect(bc[0].message).toContain('not symmetric');
    expect(bc[1].message).toContain('not positive definite');
  });
});

// Every reader diagnostic kind with its file, line and column (the conventions' "Errors", "Time" and "Lines"
// sections, /work/shared/spec/log-conventions.md). Inputs are written inline so each position can be counted by hand.
import { describe, expect, it } from 'vitest';
import { readLogText } from '../../../extension/core/read/index';
import { DIAGNOSTIC_CAP } from '../../../extension/core/read/diagnostics';
import { kinds } from './helpers';

describe('reader diagnostics', () => {
  it('parse-error: an unparseable number, with line and column', async () => {
    const log = await readLogText('t,p_x,p_y\n0,1,2\n1,1.2.3,2\n', 'a.csv');
    expect(kinds(log, 'parse-error')).toEqual([
      expect.objectContaining({ severity: 'error', file: 'a.csv', line: 3, column: 3 }),
    ]);
    expect(log.state.columns.get('p_x')?.[1]).toBeNaN();
    expect(log.state.columns.get('p_y')?.[1]).toBe(2);
  });

  it('parse-error: a ragged row (too few and too many cells)', async () => {
    const log = await readLogText('t,p_x,p_y\n0,1\n1,1,2,3\n2,1,2\n', 'r.csv');
    const pe = kinds(log, 'parse-error');
    expect(pe.map((d) => [d.line, d.severity])).toEqual([[2, 'warning'], [3, 'warning']]);
    expect(pe[0].message).toContain('2 cells but the header has 3');
    expect(pe[1].message).toContain('4 cells');
    expect(Array.from(log.state.columns.get('p_y') ?? [])).toEqual([NaN, 2, 2]);
  });

  it('unknown-column: an unknown name and a duplicate role, at the header cell', async () => {
    const log = await readLogText('t,p_x,speed,px\n0,1,2,3\n', 'u.csv');
    const uc = kinds(log, 'unknown-column');
    expect(uc.map((d) => [d.severity, d.line, d.column])).toEqual([['info', 1, 7], ['info', 1, 13]]);
    expect(uc[0].message).toContain('"speed"');
    expect(uc[1].message).toContain('repeats the role of column "p_x"');
    expect(log.state.columns.get('p_x')?.[0]).toBe(1);
  });

  it('bad-value: inf, -inf and Infinity cells', async () => {
    const log = await readLogText('t;p_x;p_y;p_z\n0;inf;-INF;Infinity\n', 'b.csv');
    expect(kinds(log, 'bad-value').map((d) => [d.line, d.column])).toEqual([[2, 3], [2, 7], [2, 12]]);
  });

  it('time-backwards and time-gap, judged per stream', async () => {
    // state at 0, 0.1, 0.2, 0.15 (backwards), 0.25, 1.25 (gap of 1 s = 10 median steps);
    // the channel updates every 0.5 s at lines 2, 7 with no gap.
    const text = 't,p_x,nu_c,s_c\n0,1,0.1,1\n0.1,1,,\n0.2,1,,\n0.15,1,,\n0.25,1,,\n1.25,1,0.1,1\n';
    const log = await readLogText(text, 'time.csv');
    const back = kinds(log, 'time-backwards');
    expect(back).toEqual([expect.objectContaining({ file: 'time.csv', line: 5, t: 0.15 })]);
    const gap = kinds(log, 'time-gap');
    expect(gap).toEqual([expect.objectContaining({ file: 'time.csv', line: 7, t: 1.25 })]);
    expect(gap[0].channel).toBeUndefined();
  });

  it('time-gap per channel with the channel named', async () => {
    const rows = ['t,nu_c,s_c'];
    for (let k = 0; k < 10; k++) rows.push(`${k * 0.1},0.1,1`);
    rows.push('5,0.1,1');
    const log = await readLogText(rows.join('\n'), 'ch.csv');
    expect(kinds(log, 'time-gap')).toEqual([expect.objectContaining({ line: 12, channel: 'c' })]);
  });

  it('bad-rotation: a quaternion off by more than 1e-3 is normalised within 10% and left out beyond', async () => {
    const text = 't,q_w,q_x,q_y,q_z\n0,1.0005,0,0,0\n1,1.05,0,0,0\n2,2,0,0,0\n';
    const log = await readLogText(text, 'q.csv');
    expect(kinds(log, 'bad-rotation').map((d) => d.line)).toEqual([3, 4]);
    const qw = Array.from(log.state.columns.get('q_w') ?? []);
    expect(qw[0]).toBe(1.0005); // within 1e-3: kept as logged
    expect(qw[1]).toBeCloseTo(1, 15); // normalised
    expect(qw[2]).toBeNaN(); // dropped
  });

  it('bad-rotation: a matrix that is not orthonormal', async () => {
    // r_11 = 1.01: |R R^T - I| has 0.0201 on the diagonal, over 1e-3 and under 0.1 -> repaired with a finding.
    const log = await readLogText('t,r_11,r_12,r_13,r_21,r_22,r_23,r_31,r_32,r_33\n0,1.01,0,0,0,1,0,0,0,1\n', 'm.csv');
    const br = kinds(log, 'bad-rotation');
    expect(br).toEqual([expect.objectContaining({ line: 2 })]);
    expect(br[0].message).toContain('0.0201');
  });

  it('bad-covariance: an innovation covariance that is not positive definite, or not symmetric', async () => {
    const text = [
      't,nu_v_0,nu_v_1,s_v_0_0,s_v_1_1,s_v_0_1,s_v_1_0',
      '0,0.1,0.1,1,1,0.5,0.5',
      '1,0.1,0.1,1,1,2,2',
      '2,0.1,0.1,1,1,0.5,0.4',
    ].join('\n');
    const log = await readLogText(text, 's.csv');
    const bc = kinds(log, 'bad-covariance');
    expect(bc.map((d) => [d.line, d.channel])).toEqual([[3, 'v'], [4, 'v']]);
    expect(bc[0].message).toContain('not positive definite');
    expect(bc[1].message).toContain('not symmetric');
    // the non-symmetric pair is replaced by the mean of both triangles
    expect(Array.from(log.channels[0].S ?? []).slice(8, 12)).toEqual([1, 0.45, 0.45, 1]);
  });

  it(`caps repeats of one kind per column at ${DIAGNOSTIC_CAP} plus one summary line`, async () => {
    const rows = ['t,p_x'];
    for (let k = 0; k < 500; k++) rows.push(`${k},x`);
    const log = await readLogText(rows.join('\n'), 'many.csv');
    const pe = kinds(log, 'parse-error');
    expect(pe).toHaveLength(DIAGNOSTIC_CAP + 1);
    expect(pe[DIAGNOSTIC_CAP]).toMatchObject({ line: 0 });
    expect(pe[DIAGNOSTIC_CAP].message).toContain(`${500 - DIAGNOSTIC_CAP} more like this`);
  });

  it('LF, CRLF and CR mixed in one file each end one line (any chunking)', async () => {
    for (const chunkSize of [1, 3, 1 << 16]) {
      const log = await readLogText('t,x\r\n0,1\n1,2\r2,3\r\n3,4\n', 'mixed.csv', { chunkSize });
      expect(Array.from(log.state.line)).toEqual([2, 3, 4, 5]);
      expect(Array.from(log.state.columns.get('p_x') ?? [])).toEqual([1, 2, 3, 4]);
    }
  });

  it('an overflowing number (1e309) is a bad value; a header without rows and an over-large component index are named', async () => {
    const over = await readLogText('t,p_x\n0,1e309\n', 'o.csv');
    expect(kinds(over, 'bad-value')).toEqual([expect.objectContaining({ line: 2, column: 3 })]);
    const empty = await readLogText('t,p_x\n', 'h.csv');
    expect(empty.diagnostics[0].message).toContain('no data rows');
    const big = await readLogText('t,p_x,nu_c_300\n0,1,2\n', 'big.csv');
    expect(big.channels).toEqual([]);
    expect(kinds(big, 'unknown-column')[0]).toMatchObject({ line: 1, column: 7 });
  });

  it('a UTF-16 file is named as such', async () => {
    const { bytesSource, readRun } = await import('../../../extension/core/read/index');
    const log = await readRun(bytesSource('u16.csv', new Uint8Array([0xff, 0xfe, 0x74, 0, 0x0a, 0])));
    expect(log.diagnostics[0]).toMatchObject({ severity: 'error', line: 1 });
    expect(log.diagnostics[0].message).toContain('UTF-16');
  });

  it('a file read error is a diagnostic naming the file, not an exception', async () => {
    const { readRun } = await import('../../../extension/core/read/index');
    const failing = {
      name: 'gone.csv',
      // eslint-disable-next-line require-yield
      async *chunks(): AsyncIterable<Uint8Array> { throw new Error('gone.csv does not exist'); },
    };
    const log = await readRun(failing);
    expect(log.diagnostics[0]).toMatchObject({ severity: 'error', file: 'gone.csv', line: 0 });
    expect(log.diagnostics[0].message).toContain('does not exist');
  });
});

/**
 * A negative standard deviation in a log (invalid data: a sigma cannot be negative) is reported once per column by
 * the reader, with file, line and column, and read as missing, so no stage squares it into a valid variance.
 * The logs are small ones of our own warehouse demo scenario, written here: a forklift tag driving along an aisle
 * at 1 m/s, 10 Hz, with the estimator's 1-sigma position columns and the survey reference.
 */
import { describe, expect, it } from 'vitest';
import { readRun, textSource } from '../../../extension/core/read/index';
import { detectCovarianceJumps } from '../../../extension/core/resets/index';
import { analyzeLog } from '../../../extension/core/analyze';
import { resolveSettings } from '../../../extension/core/settings';
import type { NavLog, StateStream } from '../../../extension/core/model';
import type { ErrorsBlock } from '../../../extension/core/errors/index';

const ROWS = 60;
/** Rows (0-based) where sigma_p_x is logged negative, and the one where sigma_p_y is. */
const NEG_X = [20, 33, 47];
const NEG_Y = 40;

/** The CSV text: header on line 1, row i on line i + 2. sigma 0.05 m; -0.5 m at the rows above. */
function warehouseCsv(): { text: string; lines: string[] } {
  const lines = ['t,p_x,p_y,p_z,sigma_p_x,sigma_p_y,sigma_p_z,gt_p_x,gt_p_y,gt_p_z'];
  for (let i = 0; i < ROWS; i++) {
    const t = i / 10;
    const gx = 2 + t, gy = 7.5, gz = 1.2; // aisle 3 of the warehouse, tag at forklift-mast height
    // estimate error 2 cm, 1 cm, -1 cm: inside +-3 sigma (sigma 5 cm)
    const sx = NEG_X.includes(i) ? '-0.5' : '0.05';
    const sy = i === NEG_Y ? '-0.5' : '0.05';
    lines.push([t.toFixed(1), (gx - 0.02).toFixed(3), (gy - 0.01).toFixed(3), (gz + 0.01).toFixed(3), sx, sy, '0.05',
      gx.toFixed(3), gy.toFixed(3), gz.toFixed(3)].join(','));
  }
  return { text: lines.join('\n') + '\n', lines };
}

/** 1-based character column where cell c of a CSV row starts (plain commas, no quotes). */
function cellStart(row: string, c: number): number {
  return row.split(',').slice(0, c).reduce((a, cell) => a + cell.length + 1, 1);
}

describe('negative standard deviations (warehouse demo scenario, written here)', () => {
  it('CSV: one bad-value diagnostic per column with file, line and column; the others counted; values read as missing', async () => {
    const { text, lines } = warehouseCsv();
    const log = await readRun(textSource('aisle3.csv', text, 97));
    // (line 0: the summary line of a column, below)
    const neg = log.diagnostics.filter((d) => d.line > 0 && /negative standard deviation/.test(d.message));
    expect(neg.length).toBe(2);
    const [dx, dy] = [neg.find((d) => d.message.includes('sigma_p_x')), neg.find((d) => d.message.includes('sigma_p_y'))];
    expect(dx).toMatchObject({ kind: 'bad-value', severity: 'warning', file: 'aisle3.csv', line: NEG_X[0] + 2 });
    expect(dx?.column).toBe(cellStart(lines[NEG_X[0] + 1], 4));
    expect(dy).toMatchObject({ kind: 'bad-value', file: 'aisle3.csv', line: NEG_Y + 2, column: cellStart(lines[NEG_Y + 1], 5) });
    // Nothing lost: the other two of sigma_p_x are counted in one summary line.
    const more = log.diagnostics.filter((d) => d.message.startsWith('2 more like this not listed'));
    expect(more.length).toBe(1);
    expect(more[0].message).toContain('sigma_p_x');
    expect(more[0].message).toContain(`first of them at line ${NEG_X[1] + 2}`);
    const sx = log.state.columns.get('sigma_p_x') as Float64Array;
    const sy = log.state.columns.get('sigma_p_y') as Float64Array;
    expect(log.state.length).toBe(ROWS);
    for (let i = 0; i < ROWS; i++) {
      if (NEG_X.includes(i)) expect(sx[i]).toBeNaN(); else expect(sx[i]).toBe(0.05);
      if (i === NEG_Y) expect(sy[i]).toBeNaN(); else expect(sy[i]).toBe(0.05);
    }
  });

  it('JSON lines: the same diagnostic with the record\'s line and column', async () => {
    const recs = [0, 1, 2, 3].map((i) => `{"kind":"state","t":${i / 10},"p":[${2 + i / 10},7.5,1.2],` +
      `"sigma":{"p":[${i === 2 ? -0.5 : 0.05},0.05,0.05]}}`);
    const log = await readRun(textSource('aisle3.jsonl', recs.join('\n') + '\n'));
    const neg = log.diagnostics.filter((d) => /negative standard deviation/.test(d.message));
    expect(neg).toHaveLength(1);
    expect(neg[0]).toMatchObject({ kind: 'bad-value', file: 'aisle3.jsonl', line: 3, column: 1 });
    expect(log.state.columns.get('sigma_p_x')?.[2]).toBeNaN();
    expect(log.state.columns.get('sigma_p_x')?.[1]).toBe(0.05);
  });

  it('no stage squares it: no covariance jump, NEES and the +-3 sigma share leave those epochs out', async () => {
    const log = await readRun(textSource('aisle3.csv', warehouseCsv().text));
    // A sigma of 0.5 m after 0.05 m is a 100-fold variance: squared, -0.5 would be a restart candidate (checked
    // below on the raw column, with the value made positive, so this check can fail).
    expect(detectCovarianceJumps(log.state)).toEqual([]);
    const positive = withSigmaX(log, (i) => (NEG_X.includes(i) ? 0.5 : 0.05));
    expect(detectCovarianceJumps(positive).map((j) => j.index)).toEqual(NEG_X);
    // And handed a negative sigma directly (a NavLog not made by the reader), the detector treats it as missing.
    const raw = withSigmaX(log, (i) => (NEG_X.includes(i) ? -0.5 : 0.05));
    expect(detectCovarianceJumps(raw)).toEqual([]);

    const res = analyzeLog(log, resolveSettings());
    const errors = res.report.errors as ErrorsBlock;
    // Error 2 cm, 1 cm, -1 cm against sigma 5 cm: every epoch with a valid sigma lies inside +-3 sigma.
    expect(errors.within3Sigma.position).toEqual([1, 1, 1]);
    // NEES per epoch = (0.02^2 + 0.01^2 + 0.01^2) / 0.05^2 = 0.24, over the 56 epochs whose three sigmas are valid.
    const pos = errors.position as { nees?: { count: number; mean: number } };
    expect(pos.nees?.count).toBe(ROWS - NEG_X.length - 1);
    expect(Math.abs((pos.nees?.mean ?? NaN) - 0.24)).toBeLessThan(1e-9);
    expect(res.report.findings.some((f) => f.kind === 'covariance-jump')).toBe(false);
  });
});

/** A copy of the log's state stream with sigma_p_x replaced. */
function withSigmaX(log: NavLog, f: (i: number) => number): StateStream {
  const columns = new Map(log.state.columns);
  columns.set('sigma_p_x', Float64Array.from({ length: log.state.length }, (_, i) => f(i)));
  return { ...log.state, columns };
}

/**
 * The memory budget of the reader's columns (extension/core/read/budget.ts): a log whose columns exceed the budget is
 * decimated (every 2nd record kept, stride doubling on each further refusal), marked partial, and a diagnostic says
 * plainly what was kept. Oracle: the same log read without a budget; a decimated stream must be exactly the records
 * 0, k, 2k... of the full read (k = its stride), times, lines and values alike.
 */
import { describe, expect, it } from 'vitest';
import { LogReader, readLogText } from '../../extension/core/read/index';
import { analyzeLog } from '../../extension/core/analyze';
import { resolveSettings } from '../../extension/core/settings';
import { bytesPerRecord, streamBytes } from '../../extension/core/read/budget';
import { StreamBuilder } from '../../extension/core/read/builder';
import { reportProblems } from '../helpers/reportSchema';

/** A log of `n` state rows (t, position, attitude) with a 2-component channel on every 3rd row. */
function makeLog(n: number): string {
  const rows = ['t,p_x,p_y,p_z,q_w,q_x,q_y,q_z,sigma_p_x,nu_uwb_0,nu_uwb_1,S_uwb_0_0,S_uwb_1_1'];
  for (let i = 0; i < n; i++) {
    const t = (i * 0.01).toFixed(2);
    const nu = i % 3 === 0 ? `${(((i * 7919) % 101) - 50) / 100},${(((i * 104729) % 97) - 48) / 100},0.25,0.25` : ',,,';
    rows.push(`${t},${i},${2 * i},${-i},1,0,0,0,0.5,${nu}`);
  }
  return rows.join('\n') + '\n';
}

const N = 20_000;
const TEXT = makeLog(N);

describe('memory budget: decimation of a log larger than the budget', () => {
  it('keeps exactly every k-th state record and channel update of the full read, says so, and sets partial', async () => {
    const full = await readLogText(TEXT, 'big.csv');
    expect(full.partial).toBeUndefined();
    expect(full.state.length).toBe(N);
    // Budget: a quarter of what the state columns alone need (so several halvings are needed).
    const stateBytes = N * 13 * 8;
    const budget = Math.floor(stateBytes / 4);
    const small = await readLogText(TEXT, 'big.csv', { memoryBudgetBytes: budget });
    expect(small.partial).toBe(true);
    expect(small.rows).toBe(full.rows);

    for (const [part, whole] of [[small.state, full.state], [small.channels[0], full.channels[0]]] as const) {
      const n = part.length;
      expect(n).toBeGreaterThan(1);
      expect(n).toBeLessThan(whole.length);
      // The stride is the power of two that maps the kept records onto the full read.
      const k = Math.round(whole.length / n) >= 2 ? 2 ** Math.round(Math.log2(whole.length / n)) : 1;
      expect(k).toBeGreaterThanOrEqual(2);
      expect(Math.ceil(whole.length / k)).toBe(n);
      for (let i = 0; i < n; i++) {
        expect(part.t_s[i]).toBe(whole.t_s[i * k]);
        expect(part.line[i]).toBe(whole.line[i * k]);
      }
    }
    const k = full.state.length / small.state.length;
    const px = small.state.columns.get('p_x') as Float64Array;
    const pxFull = full.state.columns.get('p_x') as Float64Array;
    const stride = 2 ** Math.round(Math.log2(k));
    for (let i = 0; i < small.state.length; i++) expect(px[i]).toBe(pxFull[i * stride]);
    const ch = small.channels[0];
    const chFull = full.channels[0];
    const cs = 2 ** Math.round(Math.log2(chFull.length / ch.length));
    for (let i = 0; i < ch.length; i++) {
      expect(ch.nu[2 * i]).toBe(chFull.nu[2 * i * cs]);
      expect(ch.nu[2 * i + 1]).toBe(chFull.nu[2 * i * cs + 1]);
      expect(ch.S?.[4 * i]).toBe(chFull.S?.[4 * i * cs]);
    }

    // Channel share: the state stream leaves room to the channel, so the channel is thinned less.
    expect(cs).toBeLessThan(stride);
    const note = small.diagnostics.find((d) => /memory budget/.test(d.message));
    console.log(`memory budget note: ${note?.message}`);
    expect(note?.severity).toBe('warning');
    expect(note?.message).toMatch(new RegExp(`every ${stride}th state record was kept \\(${small.state.length} of ${N}\\)`));
    expect(note?.message).toMatch(/The log needs about [\d.]+ (KiB|MiB) of columns, more than the \d+ KiB memory budget/);
  });

  it('the decimated analysis is a valid report with partial: true and the budget finding', async () => {
    const budget = 200_000;
    const log = await readLogText(TEXT, 'big.csv', { memoryBudgetBytes: budget });
    const { report } = analyzeLog(log, resolveSettings({ memoryBudgetBytes: budget }));
    expect(reportProblems(report)).toEqual([]);
    expect(report.partial).toBe(true);
    expect(report.findings.some((f) => /memory budget/.test(f.message))).toBe(true);
    expect(report.time.epochs).toBe(log.state.length);
    expect(report.source.rows).toBe(N);
  });

  it('a budget large enough changes nothing: same columns, partial stays false', async () => {
    const full = await readLogText(TEXT, 'big.csv');
    const roomy = await readLogText(TEXT, 'big.csv', { memoryBudgetBytes: 1e9 });
    expect(roomy.partial).toBeUndefined();
    expect(Array.from(roomy.state.t_s)).toEqual(Array.from(full.state.t_s));
    expect(roomy.diagnostics.map((d) => d.message)).toEqual(full.diagnostics.map((d) => d.message));
    const { report } = analyzeLog(roomy, resolveSettings());
    expect(report.partial).toBe(false);
  });

  it('the allocated columns never exceed the budget, whatever the chunking', async () => {
    const budget = 150_000;
    const bytes = new TextEncoder().encode(TEXT);
    for (const chunk of [1 << 16, 997]) {
      const reader = new LogReader('big.csv', { memoryBudgetBytes: budget });
      let peak = 0;
      for (let k = 0; k < bytes.length; k += chunk) {
        reader.push(bytes.subarray(k, k + chunk));
        let total = 0;
        for (const b of reader.run.builders()) total += streamBytes(b);
        peak = Math.max(peak, total);
      }
      const log = reader.finish();
      expect(log.partial).toBe(true);
      expect(peak).toBeLessThanOrEqual(budget);
      expect(peak).toBeGreaterThan(budget / 4);
    }
    const b = new StreamBuilder();
    b.slot('x');
    b.slot('S', 4);
    // time 8 + line 8 + file index 2 + x 8 + S 4 x 8
    expect(bytesPerRecord(b)).toBe(8 + 8 + 2 + 8 + 32);
  });

  it('chunking does not change a decimated read', async () => {
    const a = await readLogText(TEXT, 'big.csv', { memoryBudgetBytes: 150_000 });
    const b = await readLogText(TEXT, 'big.csv', { memoryBudgetBytes: 150_000, chunkSize: 4093 });
    expect(Array.from(b.state.t_s)).toEqual(Array.from(a.state.t_s));
    expect(Array.from(b.channels[0].line)).toEqual(Array.from(a.channels[0].line));
  });
});

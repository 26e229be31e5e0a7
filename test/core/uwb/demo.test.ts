import { describe, expect, it } from 'vitest';
import { analyzeUwb } from '../../../extension/core/uwb/index';
import { DEFAULT_SETTINGS } from '../../../extension/core/settings';
import { generateWarehouseLog, warehouseFaults } from '../../../extension/core/demo/warehouse';
import { readLogText } from '../../../extension/core/read/index';

// The project's own invented demo scene (core/demo/warehouse.ts) read through the project reader: its injected NLOS
// fault blocks anchor 5 (pairs 4-5, 5-6, 1-5) for part of the run; the other faults are not UWB faults.
describe('warehouse demo, end to end through the reader', () => {
  it('anchor 5 and only anchor 5 is suspect; the finding starts inside the NLOS interval', async () => {
    const log = await readLogText([...generateWarehouseLog({})].join(''), 'warehouse.csv');
    const out = analyzeUwb(log, DEFAULT_SETTINGS);
    expect(out.block!.anchors.filter((a) => a.suspect).map((a) => a.id)).toEqual(['5']);
    expect(out.block!.pairs.filter((p) => p.excessAnomalies).map((p) => p.id).sort()).toEqual(['1-5', '4-5', '5-6']);
    const nlos = warehouseFaults({}).find((f) => f.kind === 'nlos')!;
    const f = out.findings.find((x) => x.kind === 'suspect-anchor')!;
    expect(f.id).toBe('5');
    expect(f.t!).toBeGreaterThanOrEqual(nlos.t_s);
    expect(f.t!).toBeLessThan(nlos.tEnd_s!);
    // Anchors come from the log's `# anchor <id>: x y z` metadata.
    expect(out.block!.anchors.every((a) => a.p !== undefined)).toBe(true);
  });
});

import { describe, expect, it } from 'vitest';
import { readFileSync, statSync } from 'node:fs';
import { resolve } from 'node:path';
import { inv } from 'mathjs';
import { Quaternion, Vector3 } from 'three';
import {
  anchorsCsv, createTruthSample, DEMO_FLIGHT_OPTIONS, generateWarehouseLog, warehouseAnchors, warehouseColumns,
  warehouseBodyRate, warehouseFaults, warehouseLoopPeriod, warehouseTruth, GRAVITY_MPS2,
} from '../../extension/core/demo/warehouse';
import { chi2MeanBounds, column, parseDemoCsv, type DemoTable } from './helpers';

const root = resolve(__dirname, '../..');
const demoText = [...generateWarehouseLog(DEMO_FLIGHT_OPTIONS)].join('');
const demo: DemoTable = parseDemoCsv(demoText);
const faults = warehouseFaults(DEMO_FLIGHT_OPTIONS);
const fault = (kind: string) => {
  const f = faults.find((x) => x.kind === kind);
  if (!f) throw new Error(`fault ${kind} missing`);
  return f;
};
const t = column(demo, 't');

/** Indices of rows with t in [t0, t1). */
function rowsIn(t0: number, t1: number, pred: (i: number) => boolean = () => true): number[] {
  const out: number[] = [];
  for (let i = 0; i < t.length; i++) if (t[i] >= t0 - 1e-9 && t[i] < t1 - 1e-9 && pred(i)) out.push(i);
  return out;
}
function mean(xs: number[]): number {
  return xs.reduce((a, b) => a + b, 0) / xs.length;
}

// Clean stretches of the 60 s demo: after the sigmas converge, away from every fault and its after-effects.
const CLEAN: Array<[number, number]> = [[8, 15], [45, 49]];
const cleanRows = (pred?: (i: number) => boolean) => CLEAN.flatMap(([a, b]) => rowsIn(a, b, pred));

describe('warehouse generator: determinism and formats', () => {
  it('gives the same bytes for the same options whatever the chunk size, and different bytes for another seed', () => {
    const small = { ...DEMO_FLIGHT_OPTIONS, duration_s: 3 };
    const a = [...generateWarehouseLog(small)].join('');
    const b = [...generateWarehouseLog({ ...small, batchLines: 1 })].join('');
    const c = [...generateWarehouseLog({ ...small, seed: 8 })].join('');
    expect(b).toBe(a);
    expect(c).not.toBe(a);
    expect([...generateWarehouseLog({ ...small, batchLines: 7 })].length).toBeGreaterThan(30);
  });

  it('writes the documented header, metadata and a constant number of cells per row', () => {
    expect(demo.header).toEqual(warehouseColumns(DEMO_FLIGHT_OPTIONS));
    expect(demo.header.length).toBe(64);
    expect(new Set(demo.widths)).toEqual(new Set([64]));
    expect(demo.meta.frame).toBe('ENU');
    expect(demo.meta.source).toBe('src/filter/tdoa_update.cpp:120');
    for (const a of warehouseAnchors()) expect(demo.meta[`anchor ${a.id}`]).toBe(a.p.map((v) => v.toFixed(2)).join(' '));
    expect(warehouseColumns({ columns: 'bench' }).length).toBe(49);
  });

  it('carries the same values in CSV, JSON Lines and JSON', () => {
    const small = { ...DEMO_FLIGHT_OPTIONS, duration_s: 2 };
    const csv = parseDemoCsv([...generateWarehouseLog(small)].join(''));
    const jsonl = [...generateWarehouseLog({ ...small, format: 'jsonl' })].join('').trimEnd().split('\n').map((l) => JSON.parse(l));
    const json = JSON.parse([...generateWarehouseLog({ ...small, format: 'json' })].join(''));
    expect(json.meta.frame).toBe('ENU');
    expect(json.records).toEqual(jsonl);
    const states = jsonl.filter((r) => r.kind === 'state');
    const updates = jsonl.filter((r) => r.kind === 'update' && r.channel === 'tdoa');
    const mags = jsonl.filter((r) => r.kind === 'update' && r.channel === 'mag');
    expect(states.length).toBe(csv.line.length);
    states.forEach((s, i) => {
      expect(s.t).toBe(column(csv, 't')[i]);
      expect(s.p).toEqual([column(csv, 'p_x')[i], column(csv, 'p_y')[i], column(csv, 'p_z')[i]]);
      expect(s.gt.q[0]).toBe(column(csv, 'gt_q_w')[i]);
      expect(s.sigma.att[2]).toBe(column(csv, 'sigma_att_z')[i]);
    });
    const nuCsv = [...column(csv, 'nu_tdoa')].filter((v) => !Number.isNaN(v));
    expect(updates.map((u) => u.nu[0])).toEqual(nuCsv);
    expect(updates.map((u) => u.id)).toEqual(csv.text.get('id_tdoa')!.filter((s) => s !== ''));
    expect(mags.length).toBe([...column(csv, 'nu_mag_0')].filter((v) => !Number.isNaN(v)).length);
    // the JSON S is the full symmetric matrix; the CSV carries its upper triangle
    for (const m of mags) expect(m.S[1][0]).toBe(m.S[0][1]);
  });
});

describe('warehouse generator: the shipped demo files', () => {
  it('demo/warehouse-flight.csv is the generator output, under 2 MB; anchors.csv matches', () => {
    const shipped = readFileSync(resolve(root, 'demo/warehouse-flight.csv'), 'utf8');
    expect(shipped === demoText).toBe(true);
    expect(statSync(resolve(root, 'demo/warehouse-flight.csv')).size).toBeLessThan(2_000_000);
    expect(readFileSync(resolve(root, 'demo/anchors.csv'), 'utf8')).toBe(anchorsCsv());
  });

  it('the source metadata points at the line of the sample estimator that logs nu_tdoa', () => {
    const [file, line] = demo.meta.source.split(':');
    const src = readFileSync(resolve(root, 'demo/workspace', file), 'utf8').split('\n');
    expect(src[Number(line) - 1]).toContain('"nu_tdoa"');
  });

  it('the sample logger writes the same header as the log', () => {
    const py = readFileSync(resolve(root, 'demo/workspace/src/filter/logger.py'), 'utf8');
    const block = py.slice(py.indexOf('STATE_COLUMNS = ['), py.indexOf('HEADER ='));
    const names = [...block.matchAll(/"([a-z_0-9]+)"/g)].map((m) => m[1]);
    expect(names).toEqual(demo.header);
  });

  it('demo/README.md documents every injected fault at its time', () => {
    const readme = readFileSync(resolve(root, 'demo/README.md'), 'utf8');
    for (const f of faults) {
      const span = f.tEnd_s !== undefined ? `${f.t_s.toFixed(1)} to ${f.tEnd_s.toFixed(1)}` : f.t_s.toFixed(1);
      expect(readme).toContain(`| ${span} `);
    }
    const badRow = demo.line[rowsIn(fault('bad-quaternion').t_s, fault('bad-quaternion').t_s + 0.005)[0]];
    expect(readme).toContain(`(line ${badRow})`);
  });
});

describe('warehouse generator: truth', () => {
  it('velocity and acceleration are the derivatives of position (central differences)', () => {
    const s = createTruthSample(), a = createTruthSample(), b = createTruthSample();
    const h = 1e-4;
    for (let tt = 0.37; tt < 2 * warehouseLoopPeriod(); tt += 3.1) {
      warehouseTruth(tt, s);
      warehouseTruth(tt - h, a);
      warehouseTruth(tt + h, b);
      for (let c = 0; c < 3; c++) {
        expect((b.p_m[c] - a.p_m[c]) / (2 * h)).toBeCloseTo(s.v_mps[c], 5);
        expect((b.v_mps[c] - a.v_mps[c]) / (2 * h)).toBeCloseTo(s.a_mps2[c], 4);
      }
    }
  });

  it('stays inside the warehouse and tilts its thrust axis along acceleration plus gravity', () => {
    const s = createTruthSample();
    for (let tt = 0; tt < warehouseLoopPeriod(); tt += 0.25) {
      warehouseTruth(tt, s);
      expect(s.p_m[0]).toBeGreaterThan(0.5); expect(s.p_m[0]).toBeLessThan(39.5);
      expect(s.p_m[1]).toBeGreaterThan(0.5); expect(s.p_m[1]).toBeLessThan(23.5);
      expect(s.p_m[2]).toBeGreaterThan(1); expect(s.p_m[2]).toBeLessThan(8);
      // three.js (general-purpose reference, Hamilton, x y z w order) rotates body z into the navigation frame
      const q = new Quaternion(s.nav_q_body[1], s.nav_q_body[2], s.nav_q_body[3], s.nav_q_body[0]);
      const zb = new Vector3(0, 0, 1).applyQuaternion(q);
      const f = new Vector3(s.a_mps2[0], s.a_mps2[1], s.a_mps2[2] + GRAVITY_MPS2).normalize();
      expect(zb.dot(f)).toBeGreaterThan(1 - 1e-12);
      // nose toward the horizontal velocity: body y is perpendicular to it, body x points along it
      const xb = new Vector3(1, 0, 0).applyQuaternion(q);
      const yb = new Vector3(0, 1, 0).applyQuaternion(q);
      const vh = new Vector3(s.v_mps[0], s.v_mps[1], 0).normalize();
      expect(Math.abs(yb.dot(vh))).toBeLessThan(1e-12);
      expect(xb.dot(vh)).toBeGreaterThan(0.9);
    }
  });
});

describe('warehouse generator: consistent by construction outside the faults', () => {
  it('position NEES of clean stretches lies in the chi-square(3) interval; the NLOS stretch does not', () => {
    const nees = (i: number) => ['x', 'y', 'z'].reduce((s, a) => {
      const e = (column(demo, `gt_p_${a}`)[i] - column(demo, `p_${a}`)[i]) / column(demo, `sigma_p_${a}`)[i];
      return s + e * e;
    }, 0);
    const clean = cleanRows().map(nees);
    const [lo, hi] = chi2MeanBounds(clean.length, 3);
    expect(mean(clean)).toBeGreaterThan(lo);
    expect(mean(clean)).toBeLessThan(hi);
    const n = fault('nlos');
    const blocked = rowsIn(n.t_s + 2, n.tEnd_s! - 2).map(nees);
    expect(mean(blocked)).toBeGreaterThan(chi2MeanBounds(blocked.length, 3)[1] * 2);
  });

  it('velocity NEES of clean stretches lies in the chi-square(3) interval', () => {
    const nees = cleanRows().map((i) => ['x', 'y', 'z'].reduce((s, a) => {
      const e = (column(demo, `gt_v_${a}`)[i] - column(demo, `v_${a}`)[i]) / column(demo, `sigma_v_${a}`)[i];
      return s + e * e;
    }, 0));
    const [lo, hi] = chi2MeanBounds(nees.length, 3);
    expect(mean(nees)).toBeGreaterThan(lo);
    expect(mean(nees)).toBeLessThan(hi);
  });

  it('orientation NEES (R_err = R_true R_est^T) is consistent when clean and high after the gyro bias step', () => {
    const err = (i: number): number[] => {
      const q = (p: string) => new Quaternion(column(demo, `${p}_x`)[i], column(demo, `${p}_y`)[i], column(demo, `${p}_z`)[i], column(demo, `${p}_w`)[i]).normalize();
      const qe = q('gt_q').multiply(q('q').invert()); // three.js: Hamilton product, so this is q_true * q_est^-1
      if (qe.w < 0) qe.set(-qe.x, -qe.y, -qe.z, -qe.w);
      const s = Math.sqrt(qe.x ** 2 + qe.y ** 2 + qe.z ** 2);
      const k = s < 1e-12 ? 2 : (2 * Math.atan2(s, qe.w)) / s;
      return [qe.x * k, qe.y * k, qe.z * k];
    };
    const nees = (i: number) => err(i).reduce((s, e, c) => s + (e / column(demo, `sigma_att_${'xyz'[c]}`)[i]) ** 2, 0);
    const clean = cleanRows().map(nees);
    const [lo, hi] = chi2MeanBounds(clean.length, 3);
    expect(mean(clean)).toBeGreaterThan(lo);
    expect(mean(clean)).toBeLessThan(hi);
    const step = fault('gyro-bias-step').t_s;
    const after = rowsIn(step + 2, step + 8).map(nees);
    expect(mean(after)).toBeGreaterThan(chi2MeanBounds(after.length, 3)[1]);
    expect(mean(after)).toBeGreaterThan(5);
  });

  it('TDOA NIS is chi-square(1) when clean, about 4 when S is overconfident, high on pairs with the blocked anchor', () => {
    const nu = column(demo, 'nu_tdoa'), s = column(demo, 's_tdoa');
    const ids = demo.text.get('id_tdoa')!;
    const hasUpdate = (i: number) => !Number.isNaN(nu[i]);
    const nis = (i: number) => (nu[i] * nu[i]) / s[i];
    const clean = cleanRows(hasUpdate).map(nis);
    const [lo, hi] = chi2MeanBounds(clean.length, 1);
    expect(clean.length).toBeGreaterThan(500);
    expect(mean(clean)).toBeGreaterThan(lo);
    expect(mean(clean)).toBeLessThan(hi);
    const o = fault('overconfident');
    const over = rowsIn(o.t_s, o.tEnd_s!, hasUpdate).map(nis);
    expect(mean(over)).toBeGreaterThan(3);
    expect(mean(over)).toBeLessThan(5.5);
    const n = fault('nlos');
    const withFive = rowsIn(n.t_s, n.tEnd_s!, (i) => hasUpdate(i) && ids[i].split('-').includes('5')).map(nis);
    const withoutFive = rowsIn(n.t_s, n.tEnd_s!, (i) => hasUpdate(i) && !ids[i].split('-').includes('5')).map(nis);
    expect(mean(withFive)).toBeGreaterThan(8);
    const [lo2, hi2] = chi2MeanBounds(withoutFive.length, 1);
    expect(mean(withoutFive)).toBeGreaterThan(lo2);
    expect(mean(withoutFive)).toBeLessThan(hi2);
    // the estimator's own gate: rejected exactly when nu^2 / S > 16
    const rej = column(demo, 'rejected_tdoa');
    for (let i = 0; i < nu.length; i++) if (hasUpdate(i) && Math.abs(nis(i) - 16) > 0.05) expect(rej[i]).toBe(nis(i) > 16 ? 1 : 0);
  });

  it('the 3-dof magnetometer NIS (full S with off-diagonal terms, inverted by mathjs) is chi-square(3)', () => {
    const has = (i: number) => !Number.isNaN(column(demo, 'nu_mag_0')[i]);
    const rows = rowsIn(0, 60, has);
    let offDiagonal = 0;
    const nis = rows.map((i) => {
      const g = (a: number, b: number) => column(demo, `s_mag_${Math.min(a, b)}_${Math.max(a, b)}`)[i];
      const S = [[g(0, 0), g(0, 1), g(0, 2)], [g(1, 0), g(1, 1), g(1, 2)], [g(2, 0), g(2, 1), g(2, 2)]];
      offDiagonal = Math.max(offDiagonal, Math.abs(g(0, 1)), Math.abs(g(0, 2)), Math.abs(g(1, 2)));
      const Si = inv(S) as number[][];
      const v = [0, 1, 2].map((c) => column(demo, `nu_mag_${c}`)[i]);
      return v.reduce((acc, vr, r) => acc + vr * v.reduce((a2, vc, c) => a2 + Si[r][c] * vc, 0), 0);
    });
    const [lo, hi] = chi2MeanBounds(nis.length, 3);
    expect(mean(nis)).toBeGreaterThan(lo);
    expect(mean(nis)).toBeLessThan(hi);
    expect(offDiagonal).toBeGreaterThan(0.05);
  });

  it('raw TDOA is the true range difference plus 0.1 m noise, and reads long through the blocked anchor', () => {
    const anchors = warehouseAnchors();
    const resid = (i: number) => {
      const p = ['x', 'y', 'z'].map((a) => column(demo, `gt_p_${a}`)[i]);
      const d = (id: number) => Math.hypot(...anchors[id].p.map((v, c) => p[c] - v));
      return column(demo, 'tdoa')[i] - (d(column(demo, 'tdoa_j')[i]) - d(column(demo, 'tdoa_i')[i]));
    };
    const has = (i: number) => !Number.isNaN(column(demo, 'tdoa')[i]);
    const clean = cleanRows(has).map(resid);
    const sd = Math.sqrt(mean(clean.map((r) => r * r)));
    expect(sd).toBeGreaterThan(0.09);
    expect(sd).toBeLessThan(0.11);
    const n = fault('nlos');
    const toFive = rowsIn(n.t_s, n.tEnd_s!, (i) => has(i) && column(demo, 'tdoa_j')[i] === 5).map(resid);
    expect(mean(toFive)).toBeGreaterThan(0.4);
  });
});

describe('warehouse generator: injected faults', () => {
  it('drops every record in the time gap and keeps the 100 Hz grid elsewhere', () => {
    const g = fault('time-gap');
    let gaps = 0;
    for (let i = 1; i < t.length; i++) {
      const dt = t[i] - t[i - 1];
      if (dt > 0.015) {
        gaps++;
        expect(t[i - 1]).toBeLessThan(g.t_s);
        expect(t[i]).toBeCloseTo(g.tEnd_s!, 6);
      } else {
        expect(dt).toBeCloseTo(0.01, 6);
      }
    }
    expect(gaps).toBe(1);
  });

  it('writes exactly one estimated quaternion off the unit sphere, with norm 1.25, at the documented time', () => {
    const bad: number[] = [];
    for (let i = 0; i < t.length; i++) {
      const n = Math.hypot(column(demo, 'q_w')[i], column(demo, 'q_x')[i], column(demo, 'q_y')[i], column(demo, 'q_z')[i]);
      if (Math.abs(n - 1) > 1e-3) bad.push(i);
      if (Math.abs(n - 1) > 1e-3) expect(n).toBeCloseTo(1.25, 3);
    }
    expect(bad.map((i) => t[i])).toEqual([fault('bad-quaternion').t_s]);
  });

  it('steps the gyro z bias estimate by about 0.02 rad/s and leaves x and y alone', () => {
    const step = fault('gyro-bias-step').t_s;
    const before = (a: string) => mean(rowsIn(step - 5, step).map((i) => column(demo, `bg_${a}`)[i]));
    const after = (a: string) => mean(rowsIn(step + 12, step + 18).map((i) => column(demo, `bg_${a}`)[i]));
    expect(after('z') - before('z')).toBeGreaterThan(0.016);
    expect(after('z') - before('z')).toBeLessThan(0.024);
    expect(Math.abs(after('x') - before('x'))).toBeLessThan(0.003);
    // the raw gyro carries the step too: gyro_z minus the true body rate is bias plus noise
    const w = new Float64Array(3);
    const gz = (a: number, b: number) => mean(rowsIn(a, b, (i) => !Number.isNaN(column(demo, 'gyro_z')[i]))
      .map((i) => column(demo, 'gyro_z')[i] - warehouseBodyRate(t[i], w)[2]));
    expect(gz(step, step + 5) - gz(step - 5, step)).toBeCloseTo(0.02, 2);
  });

  it('is fault-free when asked: no gap, unit quaternions, no fault list', () => {
    const o = { ...DEMO_FLIGHT_OPTIONS, duration_s: 20, faults: false };
    expect(warehouseFaults(o)).toEqual([]);
    const clean = parseDemoCsv([...generateWarehouseLog(o)].join(''));
    expect(clean.line.length).toBe(2000);
    const tt = column(clean, 't');
    for (let i = 1; i < tt.length; i++) expect(tt[i] - tt[i - 1]).toBeCloseTo(0.01, 6);
  });
});

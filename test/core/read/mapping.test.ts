// The mapping file (/work/shared/spec/log-conventions.md, "Mapping file"; shape in schema/mapping.schema.json):
// validation messages with JSON path, line and column; column roles by name and position; units; header-less files;
// footers; several files of one run joined by time; anchors, reference and IMU specification.
import { describe, expect, it } from 'vitest';
import { parseMapping, readLogText, readRun, textSource } from '../../../extension/core/read/index';
import { arr, kinds, memoryFiles, problems } from './helpers';

describe('parseMapping', () => {
  it('accepts a full mapping', () => {
    const text = JSON.stringify({
      version: 1, frame: 'NED', header: true, delimiter: ';', skipRows: 1, skipFooter: 'non-numeric',
      time: { unit: 'ms', offset_s: 2, zone: '+08:00' },
      columns: { '3': { role: 'p_x', unit: 'cm' }, Heading: { role: 'yaw', unit: 'deg' }, junk: 'ignore' },
      conventions: { quaternionOrder: 'xyzw', attitudeErrorSide: 'body', errorGroup: 'SE23' },
      channels: { tdoa: { dof: 1 }, vis: { dof: 3, angleComponents: [2] } },
      files: [{ path: 'a.csv', columns: { r: { role: 'range', anchor: '4' } } }],
      reference: 'ref.csv', anchors: [{ id: '4', p: [1, 2, 3] }],
      imuSpec: { preset: 'consumer', gyroNoiseDensity: { value: 0.007, unit: 'deg/s/sqrt(Hz)' } },
    });
    const r = parseMapping(text, 'run.csv.map.json');
    expect(r.diagnostics).toEqual([]);
    expect(r.mapping?.frame).toBe('NED');
  });

  it('names the mapping file, the JSON path, the line and the column of a schema error', () => {
    const text = '{\n  "columns": {\n    "3": { "role": "p_x", "unit": "furlong" }\n  },\n  "frme": "ENU"\n}\n';
    const r = parseMapping(text, 'run.csv.map.json');
    expect(r.mapping).toBeUndefined();
    const byPath = r.diagnostics.map((d) => [d.file, d.line, d.column, d.kind]);
    // "unit" value at line 3 column 35; the unknown key "frme" (its value) at line 5 column 11 (hand-counted).
    expect(byPath).toHaveLength(2);
    expect(byPath).toContainEqual(['run.csv.map.json', 3, 35, 'parse-error']);
    expect(byPath).toContainEqual(['run.csv.map.json', 5, 11, 'parse-error']);
    expect(r.diagnostics.map((d) => d.message).join('\n')).toContain('/columns/3/unit must be one of');
    expect(r.diagnostics.map((d) => d.message).join('\n')).toContain('unknown property "frme"');
  });

  it('reports invalid JSON, an unknown role and an unknown zone', () => {
    expect(parseMapping('{ "columns": { "a": } }', 'm.json').diagnostics[0]).toMatchObject({ line: 1, column: 21 });
    const role = parseMapping('{"columns": {"a": "position_q"}}', 'm.json').diagnostics;
    expect(role[0].message).toContain('"position_q"');
    const zone = parseMapping('{"time": {"zone": "Mars/Olympus"}}', 'm.json').diagnostics;
    expect(zone[0].message).toContain('Mars/Olympus');
  });
});

describe('reading through a mapping', () => {
  it('maps columns by name and by 1-based position, with units and a time offset', async () => {
    const map = JSON.stringify({
      time: { offset_s: 100 },
      columns: {
        stamp_in_ms: { role: 't', unit: 'ms' }, '2': { role: 'p_x', unit: 'cm' },
        'Heading(deg)': { role: 'yaw', unit: 'deg' }, Pitch: { role: 'pitch', unit: 'deg' }, Roll: { role: 'roll', unit: 'deg' },
        Gyr: { role: 'gyro_z', unit: 'deg/s' }, AccZ: { role: 'acc_z', unit: 'g' }, VarX: 'var_v_x',
      },
    });
    const log = await readLogText('stamp_in_ms,north_cm,Heading(deg),Pitch,Roll,Gyr,AccZ,VarX\n1500,250,90,0,0,180,1,0.04\n',
      'm.csv', { map: { text: map, name: 'm.csv.map.json' } });
    expect(arr(log.state.t_s)).toEqual([101.5]);
    expect(arr(log.state.columns.get('p_x'))).toEqual([2.5]);
    expect(log.state.columns.get('q_z')?.[0]).toBeCloseTo(Math.SQRT1_2, 12);
    expect(log.imu?.gyro_z[0]).toBeCloseTo(Math.PI, 12);
    // 1 g = 9.80665 m/s^2 (standard gravity, common practice)
    expect(log.imu?.acc_z[0]).toBeCloseTo(9.80665, 12);
    expect(log.state.columns.get('sigma_v_x')?.[0]).toBeCloseTo(0.2, 15);
    expect(problems(log)).toEqual([]);
  });

  it('reads a header-less file with wall-clock times in a given zone and empty cells as dropouts', async () => {
    const map = JSON.stringify({ header: false, time: { zone: '+08:00' },
      columns: { '1': 't', '2': { role: 'range', anchor: 'a0' }, '3': { role: 'range', anchor: 'a1' } } });
    const text = '2022-08-15 9:37:27.039,4.09,3.81\n2022-08-15 9:37:27.044,,3.8\n';
    const log = await readLogText(text, 'u.csv', { map: { text: map, name: 'u.csv.map.json' } });
    // 2022-08-15 09:37:27.039 at +08:00 is 01:37:27.039 UTC = 1660527447.039 s (Date.UTC, hand-checked).
    expect(log.ranges?.t_s[0]).toBeCloseTo(Date.UTC(2022, 7, 15, 1, 37, 27, 39) / 1000, 6);
    expect(arr(log.ranges?.r_m)).toEqual([4.09, 3.81, 3.8]);
    expect(arr(log.ranges?.line)).toEqual([1, 1, 2]);
    expect(log.anchorIds).toEqual(['a0', 'a1']);
    expect(problems(log)).toEqual([]);
  });

  it('wall-clock strings without a zone are UTC by default', async () => {
    const log = await readLogText('time,x\n2024-02-29T23:59:59.5,1\n2024-03-01 00:00:00.25,2\n', 'w.csv');
    expect(arr(log.state.t_s)).toEqual([Date.UTC(2024, 1, 29, 23, 59, 59) / 1000 + 0.5, Date.UTC(2024, 2, 1) / 1000 + 0.25]);
  });

  it('leaves out non-numeric footer rows and says so', async () => {
    const map = '{"skipFooter": "non-numeric", "columns": {"Distance": "range"}}';
    const text = 'timestamp,Distance\n1.5,2.01\n1.6,1.99\nDistance Mean,2.0\nDistance Std,0.01\n';
    const log = await readLogText(text, 's.csv', { map: { text: map, name: 's.csv.map.json' } });
    expect(arr(log.ranges?.r_m)).toEqual([2.01, 1.99]);
    expect(kinds(log, 'parse-error')).toEqual([]);
    expect(kinds(log, 'note')[0].message).toContain('lines 4-5');
  });

  it('without skipFooter the same footer rows are parse errors', async () => {
    const text = 'timestamp,range_1\n1.5,2.01\nDistance Mean,2.0\n';
    const log = await readLogText(text, 's.csv');
    expect(kinds(log, 'parse-error')).toEqual([expect.objectContaining({ line: 3, column: 1 })]);
  });

  it('a fixed footer count is left out', async () => {
    const log = await readLogText('t,x\n0,1\n1,2\n2,3\n3,4\n', 'f.csv', { map: { text: '{"skipFooter": 2}', name: 'f.map.json' } });
    expect(arr(log.state.columns.get('p_x'))).toEqual([1, 2]);
  });

  it('joins the run\'s files by time: measurement files, reference and anchors, resolved beside the mapping', async () => {
    const files = {
      'dir/a3.csv': 'stamp,id,dist,ax,ay,az\n100,3,5.0,1,2,3\n300,3,5.2,1,2,3\n',
      'dir/a5.csv': 'stamp,id,dist,ax,ay,az\n200,5,4.0,4,5,6\n400,5,4.1,4,5,6\n',
      'dir/ref.csv': 't_ms,x,y,z\n100,0,0,0\n200,1,0,0\n',
      'dir/anchors.csv': 'id,x,y,z\n9,7,8,9\n',
    };
    const meas = (path: string) => ({ path, columns: { stamp: { role: 't', unit: 'ms' }, dist: { role: 'range', anchorFrom: 'id' },
      ax: { role: 'anchor_x', anchorFrom: 'id' }, ay: { role: 'anchor_y', anchorFrom: 'id' }, az: { role: 'anchor_z', anchorFrom: 'id' } } });
    const map = JSON.stringify({ files: [meas('a3.csv'), meas('a5.csv')], reference: 'ref.csv', anchors: 'anchors.csv',
      imuSpec: { gyroNoiseDensity: { value: 0.007, unit: 'deg/s/sqrt(Hz)' } } });
    const open = memoryFiles(files);
    const log = await readLogText('t,p_x,p_y,p_z\n0.1,0,0,0\n', 'dir/est.csv', {
      map: { text: map, name: 'dir/est.csv.map.json' },
      open: (p, rel) => open(`${rel.slice(0, rel.lastIndexOf('/') + 1)}${p}`),
    });
    expect(log.files).toEqual(['dir/est.csv', 'dir/a3.csv', 'dir/a5.csv', 'dir/ref.csv', 'dir/est.csv.map.json', 'dir/anchors.csv']);
    expect(arr(log.ranges?.t_s)).toEqual([0.1, 0.2, 0.3, 0.4]);
    expect(arr(log.ranges?.r_m)).toEqual([5.0, 4.0, 5.2, 4.1]);
    expect(log.ranges?.fileIndex && Array.from(log.ranges.fileIndex)).toEqual([1, 2, 1, 2]);
    expect(arr(log.ranges?.line)).toEqual([2, 2, 3, 3]);
    expect(log.anchors).toEqual([{ id: '3', p: [1, 2, 3] }, { id: '5', p: [4, 5, 6] }, { id: '9', p: [7, 8, 9] }]);
    expect(log.reference?.length).toBe(2);
    expect(log.reference?.file).toBe('dir/ref.csv');
    expect(arr(log.reference?.columns.get('p_x'))).toEqual([0, 1]);
    expect(log.imuSpecRaw?.gyroNoiseDensity).toEqual({ value: 0.007, unit: 'deg/s/sqrt(Hz)' });
    expect(log.rows).toBe(1 + 4 + 2);
    expect(problems(log)).toEqual([]);
  });

  it('finds <log>.map.json beside the log through open, and reports a listed file that is missing', async () => {
    const files = { 'run.csv.map.json': '{"columns": {"north": "p_x"}, "files": [{"path": "nothere.csv"}]}' };
    const log = await readRun(textSource('run.csv', 'time,north\n0,5\n'), { open: memoryFiles(files) });
    expect(arr(log.state.columns.get('p_x'))).toEqual([5]);
    const pe = kinds(log, 'parse-error');
    expect(pe).toEqual([expect.objectContaining({ file: 'run.csv.map.json', severity: 'error' })]);
    expect(pe[0].message).toContain('nothere.csv');
  });

  it('quaternion order xyzw for JSON arrays, channel dof and angle components from the mapping', async () => {
    const map = JSON.stringify({ conventions: { quaternionOrder: 'xyzw', attitudeErrorSide: 'body', errorGroup: 'SE3' },
      channels: { vis: { dof: 3, angleComponents: [2] } } });
    const text = '{"t": 0, "q": [0, 0, 0.6, 0.8]}\n{"kind": "update", "t": 0, "channel": "vis", "nis": 4.2}\n';
    const log = await readLogText(text, 'x.jsonl', { map: { text: map, name: 'x.map.json' } });
    expect(log.state.columns.get('q_w')?.[0]).toBe(0.8);
    expect(log.state.columns.get('q_z')?.[0]).toBe(0.6);
    expect(log.channels[0].dof).toBe(3);
    expect(log.channels[0].angleComponents).toEqual([false, false, true]);
    expect(log.conventions).toEqual({ attitudeErrorSide: 'body', errorGroup: 'SE3' });
  });

  it('a NIS-only channel without a mapping has dof 1 with a note', async () => {
    const log = await readLogText('t,nis_gnss\n0,2.0\n', 'n.csv');
    expect(log.channels[0].dof).toBe(1);
    expect(kinds(log, 'note')[0].message).toContain('dof');
  });

  it('a mapping naming a column the file lacks is reported', async () => {
    const log = await readLogText('t,x\n0,1\n', 'l.csv', { map: { text: '{"columns": {"north": "p_x"}}', name: 'l.map.json' } });
    expect(kinds(log, 'unknown-column').map((d) => d.file)).toContain('l.map.json');
  });
});

import { readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import {
  channelOfColumn,
  findMentions,
  headerColumns,
  isWindowsAbsolute,
  parseSourceMeta,
  pathSuffixes,
  rankHits,
} from '../../../extension/core/notes/sourceLinks';

const ROOT = path.resolve(__dirname, '../../..');

describe('# source: metadata', () => {
  it('parses POSIX, relative and Windows paths with line and column', () => {
    expect(parseSourceMeta('src/filter/tdoa_update.cpp:120')).toEqual({ path: 'src/filter/tdoa_update.cpp', line: 120 });
    expect(parseSourceMeta('C:\\src\\ekf.cpp:120')).toEqual({ path: 'C:\\src\\ekf.cpp', line: 120 });
    expect(parseSourceMeta(' "C:/src/ekf.cpp:120:7" ')).toEqual({ path: 'C:/src/ekf.cpp', line: 120, column: 7 });
    expect(parseSourceMeta('\\\\build\\share\\ekf.cpp:9')).toEqual({ path: '\\\\build\\share\\ekf.cpp', line: 9 });
    expect(parseSourceMeta('/home/u/ekf.py')).toEqual({ path: '/home/u/ekf.py' });
    // A drive letter alone is not a line number, and no file is no reference.
    expect(parseSourceMeta('C:\\src\\ekf.cpp')).toEqual({ path: 'C:\\src\\ekf.cpp' });
    expect(parseSourceMeta('C:120')).toBeUndefined();
    expect(parseSourceMeta('  ')).toBeUndefined();
    expect(parseSourceMeta('ekf.cpp:0')).toEqual({ path: 'ekf.cpp' });
  });

  it('knows Windows absolute paths and gives workspace-relative suffixes, longest first', () => {
    expect(isWindowsAbsolute('C:\\src\\ekf.cpp')).toBe(true);
    expect(isWindowsAbsolute('c:/src/ekf.cpp')).toBe(true);
    expect(isWindowsAbsolute('src/ekf.cpp')).toBe(false);
    expect(pathSuffixes('C:\\work\\src\\filter\\ekf.cpp')).toEqual(['work/src/filter/ekf.cpp', 'src/filter/ekf.cpp', 'filter/ekf.cpp', 'ekf.cpp']);
    expect(pathSuffixes('./src/../ekf.cpp')).toEqual(['src/ekf.cpp', 'ekf.cpp']);
  });
});

describe('columns and channels (log conventions, Names table)', () => {
  it('maps channel columns to their channel, longest channel name first', () => {
    const channels = ['tdoa', 'gnss', 'gnss_vel', 'mag'];
    expect(channelOfColumn('nu_tdoa', channels)).toBe('tdoa');
    expect(channelOfColumn('s_mag_0_2', channels)).toBe('mag');
    expect(channelOfColumn('nu_gnss_vel_1', channels)).toBe('gnss_vel');
    expect(channelOfColumn('NIS-gnss', channels)).toBe('gnss');
    expect(channelOfColumn('rejected_tdoa', channels)).toBe('tdoa');
    expect(channelOfColumn('id_tdoa', channels)).toBe('tdoa');
    expect(channelOfColumn('p_x', channels)).toBeUndefined();
    expect(channelOfColumn('nu_tdoax', channels)).toBeUndefined();
  });

  it('reads the header of a CSV head and the keys of JSON Lines records', () => {
    expect(headerColumns('# frame: ENU\n# source: a.cpp:1\nt,p_x,"nu_tdoa",s_tdoa\n0,1,2,3\n')).toEqual(['t', 'p_x', 'nu_tdoa', 's_tdoa']);
    expect(headerColumns('{"kind":"update","t":1,"channel":"tdoa","nu":[1]}\n{"kind":"state"')).toEqual(expect.arrayContaining(['kind', 't', 'channel', 'nu', 'nu_tdoa', 's_tdoa']));
    expect(headerColumns('')).toEqual([]);
  });
});

describe('finding and ranking where the source writes a column', () => {
  const names = ['nu_tdoa', 's_tdoa', 'id_tdoa', 'rejected_tdoa'];

  it('classifies calls, subscript writes, stream insertions, header strings, literals, identifiers and comments', () => {
    const src = [
      '// The log columns written here are nu_tdoa and s_tdoa', // 1 comment
      'log.row(t).set("nu_tdoa", nu).set("s_tdoa", s);', // 2 calls
      'row["id_tdoa"] = pair', // 3 subscript write
      'out << "rejected_tdoa" << ",";', // 4 stream
      'COLUMNS = ["nu_tdoa", "s_tdoa", "id_tdoa"]', // 5 header list
      'const header = "t,p_x,nu_tdoa,s_tdoa";', // 6 header string
      'if (name == "nu_tdoa") {', // 7 plain literal
      'double nu_tdoa = 0;', // 8 identifier
      'double nus_tdoa = 0; // nu_tdoax', // 9 no whole-word match
    ].join('\n');
    const hits = findMentions(src, 'a.cpp', names);
    const kinds = hits.map((h) => `${h.line}:${h.name}:${h.kind}`);
    expect(kinds).toEqual([
      '1:nu_tdoa:comment',
      '1:s_tdoa:comment',
      '2:nu_tdoa:log-call',
      '2:s_tdoa:log-call',
      '3:id_tdoa:log-call',
      '4:rejected_tdoa:log-call',
      '5:nu_tdoa:header',
      '5:s_tdoa:header',
      '5:id_tdoa:header',
      '6:nu_tdoa:header',
      '6:s_tdoa:header',
      '7:nu_tdoa:string',
      '8:nu_tdoa:identifier',
    ]);
    expect(hits[2].column).toBe(17);
  });

  it('ranks a logging call first, then header strings, and prefers the file of the log\'s # source: line', () => {
    const a = findMentions('x = "nu_tdoa"\nlog("nu_tdoa")\n', 'b.py', ['nu_tdoa']);
    const b = findMentions('# nu_tdoa\nHEADER = ["nu_tdoa", "s_tdoa"]\nw.set("nu_tdoa", 1)\n', 'a.py', ['nu_tdoa', 's_tdoa']);
    const ranked = rankHits([...a, ...b].filter((h) => h.name === 'nu_tdoa'));
    expect(ranked.map((h) => `${h.file}:${h.line}`)).toEqual(['a.py:3', 'b.py:2', 'a.py:2', 'b.py:1', 'a.py:1']);
    const withSource = rankHits([...a, ...b].filter((h) => h.name === 'nu_tdoa'), { file: 'b.py', line: 2 });
    expect(withSource[0]).toMatchObject({ file: 'b.py', line: 2 });
  });

  it('on the demo workspace, the logging call the demo log names is the first hit for its columns', () => {
    const file = path.join(ROOT, 'demo/workspace/src/filter/tdoa_update.cpp');
    const logger = path.join(ROOT, 'demo/workspace/src/filter/logger.py');
    const demoHead = readFileSync(path.join(ROOT, 'demo/warehouse-flight.csv'), 'utf8').slice(0, 4096);
    const meta = /^# source: (.*)$/m.exec(demoHead);
    const ref = parseSourceMeta(meta?.[1] ?? '');
    expect(ref?.path).toBe('src/filter/tdoa_update.cpp');
    const hits = [
      ...findMentions(readFileSync(file, 'utf8'), 'src/filter/tdoa_update.cpp', ['nu_tdoa']),
      ...findMentions(readFileSync(logger, 'utf8'), 'src/filter/logger.py', ['nu_tdoa']),
    ];
    const best = rankHits(hits, { file: ref!.path, line: ref!.line })[0];
    expect(best).toMatchObject({ file: 'src/filter/tdoa_update.cpp', line: ref!.line, kind: 'log-call' });
    expect(headerColumns(demoHead)).toEqual(expect.arrayContaining(['nu_tdoa', 's_tdoa', 'id_tdoa']));
  });
});

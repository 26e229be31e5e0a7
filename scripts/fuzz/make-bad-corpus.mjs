// Writes the committed corpus of bad logs, test/fixtures/bad/ (run once; the files are committed). Each file is
// described in test/fixtures/bad/README.md. The 10 MB single-line files are made at test time, never committed.
// usage: node scripts/fuzz/make-bad-corpus.mjs
import { mkdirSync, writeFileSync } from 'node:fs';
import { resolve, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';

const DIR = resolve(dirname(fileURLToPath(import.meta.url)), '../../test/fixtures/bad');
mkdirSync(DIR, { recursive: true });
const put = (name, content) => writeFileSync(resolve(DIR, name), content);
const HEAD = 't,p_x,p_y,p_z,nu_tdoa,s_tdoa,id_tdoa';
const row = (k) => `${(k * 0.01).toFixed(2)},${(1 + k * 0.1).toFixed(3)},${(2 - k * 0.05).toFixed(3)},1.500,${(0.02 * ((k % 7) - 3)).toFixed(3)},0.0100,${k % 8}-${(k + 1) % 8}`;
const rows = (n, from = 0) => Array.from({ length: n }, (_, i) => row(from + i));

// truncated in the middle of a row (the writer was killed): last line has 3 of 7 cells and half a number
put('truncated.csv', [HEAD, ...rows(5)].join('\n') + '\n0.05,1.5');
// a valid log whose final line has no newline
put('no-final-newline.csv', [HEAD, ...rows(6)].join('\n'));
// LF, CRLF and CR line endings in one file
put('mixed-line-endings.csv', HEAD + '\r\n' + row(0) + '\n' + row(1) + '\r' + row(2) + '\r\n' + row(3) + '\n' + row(4) + '\r');
// a UTF-8 byte order mark, and a second one where it does not belong (start of a data line)
put('bom-utf8.csv', '\ufeff' + [HEAD, ...rows(3)].join('\n') + '\n\ufeff' + row(3) + '\n');
// UTF-16 LE with its BOM (not UTF-8: every other byte is zero)
put('bom-utf16le.csv', Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from([HEAD, ...rows(3)].join('\n') + '\n', 'utf16le')]));
// JSON Lines with a UTF-8 BOM
put('bom-utf8.jsonl', '\ufeff{"kind":"state","t":0,"p":[1,2,3]}\n{"kind":"state","t":0.01,"p":[1.1,2,3]}\n');
// quoted fields with embedded separators, quotes and newlines (RFC 4180 style), and one unterminated quote
put('quoted.csv', [
  't,p_x,p_y,p_z,note,id_tdoa',
  '0.00,1.0,2.0,3.0,"plain",0-1',
  '0.01,1.1,2.0,3.0,"with, comma",1-2',
  '0.02,1.2,2.0,3.0,"two\nlines",2-3',
  '0.03,1.3,2.0,3.0,"say ""hi""",3-4',
  '"0.04","1.4","2.0","3.0","quoted numbers","4-5"',
  '0.05,1.5,2.0,3.0,"never closed,5-6',
  '0.06,1.6,2.0,3.0,x,6-7',
].join('\n') + '\n');
// ragged rows: too few and too many cells
put('ragged.csv', [HEAD, row(0), '0.01,1.1,2.0', row(2), row(3) + ',9,9,9', '', row(5)].join('\n') + '\n');
// the same header name twice
put('duplicate-headers.csv', ['t,p_x,p_y,p_z,p_x,nu_tdoa,nu_tdoa', '0.00,1,2,3,4,0.1,0.2', '0.01,1.1,2,3,4.1,0.1,0.2'].join('\n') + '\n');
// non-numeric cells in numeric columns
put('non-numeric.csv', [HEAD,
  row(0),
  '0.01,abc,2.0,3.0,0.1,0.01,1-2',
  '0.02,1.2.3,2.0,3.0,0.1,0.01,2-3',
  '0.03,0x1F,2.0,3.0,0.1,0.01,3-4',
  '0.04,1e,--2,3.0,0.1,0.01,4-5',
  '0.05, 1.5 ,2.0,3.0,0.1,0.01,5-6',
  'ten,1.6,2.0,3.0,0.1,0.01,6-7',
  '0.07,1.7,2.0,3.0,0.1,true,7-0',
].join('\n') + '\n');
// huge and tiny numbers: near the double range, subnormal, overflow to infinity, underflow to zero, 30 digits
put('extreme-numbers.csv', [HEAD,
  '0.00,1.7976931348623157e308,2.2250738585072014e-308,4.9e-324,0.1,0.01,0-1',
  '0.01,1e309,-1e309,1e-400,0.1,0.01,1-2',
  '0.02,123456789012345678901234567890,0.000000000000000000000000000001,-0,0.1,0.01,2-3',
  '1e300,1.0,2.0,3.0,1e-300,1e-300,3-4',
  '0.04,9007199254740993,0.30000000000000004,1.0000000000000002,0.1,0.01,4-5',
].join('\n') + '\n');
// every spelling of NaN and infinity the conventions mention, and some they do not
put('nan-inf.csv', [HEAD,
  '0.00,nan,NaN,-nan,0.1,0.01,0-1',
  '0.01,NAN,-NaN,nan(ind),0.1,0.01,1-2',
  '0.02,inf,-inf,Infinity,0.1,0.01,2-3',
  '0.03,-Infinity,+inf,INF,0.1,0.01,3-4',
  '0.04,1.#INF,-1.#IND,#N/A,0.1,0.01,4-5',
  '0.05,,,,,,',
  'nan,1,2,3,inf,0.01,5-6',
].join('\n') + '\n');
// binary garbage (deterministic bytes, with NULs and invalid UTF-8), behind a plausible extension
{
  const b = Buffer.alloc(4096);
  let s = 12345;
  for (let i = 0; i < b.length; i++) { s = (Math.imul(s, 1103515245) + 12345) >>> 0; b[i] = s >>> 24; }
  put('binary-garbage.csv', b);
  put('binary-garbage.jsonl', b);
  // a valid header, then garbage
  put('garbage-after-header.csv', Buffer.concat([Buffer.from(HEAD + '\n' + row(0) + '\n'), b.subarray(0, 512), Buffer.from('\n' + row(2) + '\n')]));
}
// invalid UTF-8 in the header and in a cell
put('invalid-utf8.csv', Buffer.concat([Buffer.from('t,p_x,p_'), Buffer.from([0xc3, 0x28]), Buffer.from(',p_z\n0,1,2,3\n0.01,'), Buffer.from([0xff, 0xfe, 0xfd]), Buffer.from(',2,3\n')]));
// deeply nested JSON (10,000 levels), as a JSON file and as one JSON Lines record
put('deeply-nested.json', '['.repeat(10000) + ']'.repeat(10000) + '\n');
put('deeply-nested.jsonl', '{"kind":"state","t":0,"p":[1,2,3]}\n' + '{"a":'.repeat(5000) + '1' + '}'.repeat(5000) + '\n{"kind":"state","t":0.02,"p":[1,2,3]}\n');
// JSON that ends too early, JSON Lines with one broken line, a JSON scalar, records that are not an array
put('truncated.json', '{"meta":{"frame":"ENU"},"records":[\n{"kind":"state","t":0,"p":[1,2,3]},\n{"kind":"state","t":0.01,"p":[1.1,2,');
put('broken-line.jsonl', '{"kind":"state","t":0,"p":[1,2,3]}\n{"kind":"state","t":0.01,"p":[1.1,2,3]\n{"kind":"state","t":0.02,"p":[1.2,2,3]}\nnot json at all\n{"kind":"update","t":0.02,"channel":"tdoa","nu":"x","S":[[0.01]]}\n');
put('scalar.json', '42\n');
put('records-not-array.json', '{"meta":{},"records":{"kind":"state"}}\n');
put('wrong-shapes.jsonl', [
  '{"kind":"state","t":"soon","p":[1,2,3]}',
  '{"kind":"state","t":0.01,"p":[1,2]}',
  '{"kind":"state","t":0.02,"p":{"x":1}}',
  '{"kind":"update","t":0.03,"channel":"tdoa","nu":[0.1,0.2],"S":[[0.01]]}',
  '{"kind":"update","t":0.04,"channel":"tdoa","nu":[0.1],"S":[[-1]]}',
  '{"kind":"teleport","t":0.05}',
  '[1,2,3]',
  'null',
  '{"kind":"state","t":NaN,"p":[Infinity,-Infinity,NaN]}',
  '{"kind":"state","t":0.07,"p":[1,2,3],}',
].join('\n') + '\n');
// empty and nearly empty files
put('empty.csv', '');
put('empty.jsonl', '');
put('empty.json', '');
put('header-only.csv', HEAD + '\n');
put('metadata-only.csv', '# frame: ENU\n# source: src/filter/update.cpp:12\n');
put('blank-lines.csv', '\n\n  \n\t\n');
put('empty-header-names.csv', ['t,,p_y,,', '0,1,2,3,4', '0.01,1,2,3,4'].join('\n') + '\n');
// bad metadata lines and a source reference without a line number
put('bad-metadata.csv', ['# frame: upside-down', '# anchor 5: 1 two 3', '# source: nowhere', '#:', '# anchor x:', HEAD, row(0)].join('\n') + '\n');
// time going backwards and repeating
put('time-backwards.csv', [HEAD, row(0), row(2), row(1), row(1), row(3)].join('\n') + '\n');
// semicolon separator with decimal commas
put('decimal-comma.csv', ['t;p_x;p_y;p_z', '0,00;1,5;2,0;3,0', '0,01;1,6;2,0;3,0'].join('\n') + '\n');
// an absurd component index in a name (a channel of 301 components from one column)
put('huge-component-index.csv', ['t,p_x,nu_tdoa_300,s_tdoa_300_300', '0,1,0.1,0.01', '0.01,1.1,0.1,0.01'].join('\n') + '\n');
// a component index beyond any array length (the fuzz found one behind a lone CR: the reader threw RangeError)
put('component-index-overflow.csv', ['t,p_x,nu_tdoa_100000000000000000000', '0,1,0.1', '0.01,1.1,0.1'].join('\n') + '\n');
// a mapping file and an anchors file that are wrong in several ways
put('bad.map.json', '{"columns":{"p_x":{"role":"warp-drive"},"t":{"unit":"fortnights"}},"channels":{"tdoa":{"dof":-1}},"anchors":42,\n');
put('bad-anchors.csv', 'id,x,y,z\n0,1,2,3\n1,one,2,3\n2,1,2\n0,4,5,6\n3,inf,0,0\n');
put('bad-anchors.json', '[{"id":"0","p":[1,2,3]},{"id":1,"p":[1,2]},{"p":[1,2,3]},"x",{"id":"4","p":[1,null,3]}]\n');
console.log(`wrote corpus to ${DIR}`);

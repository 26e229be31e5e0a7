// extension/node/fileSource.ts: files as byte sources, with clear errors for a missing file, a folder and a FIFO.
import { describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync, mkdirSync, appendFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { fileByteSource, openRelative } from '../../../extension/node/fileSource';
import { LogReader, readRun } from '../../../extension/core/read/index';

const dir = mkdtempSync(path.join(tmpdir(), 'residuum-read-'));

async function collect(src: ReturnType<typeof fileByteSource>): Promise<string> {
  const parts: Uint8Array[] = [];
  for await (const c of src.chunks()) parts.push(c);
  return Buffer.concat(parts).toString('utf8');
}

describe('fileByteSource', () => {
  it('reads a file in chunks of highWaterMark bytes, from an offset', async () => {
    const p = path.join(dir, 'a.csv');
    writeFileSync(p, 't,x\n0,1\n1,2\n');
    const src = fileByteSource(p, { highWaterMark: 4 });
    expect(src.size).toBe(12);
    const sizes: number[] = [];
    for await (const c of src.chunks()) sizes.push(c.length);
    expect(sizes).toEqual([4, 4, 4]);
    expect(await collect(fileByteSource(p, { start: 4 }))).toBe('0,1\n1,2\n');
  });

  it('a missing file, a folder and a FIFO give a diagnostic naming the path, without blocking', async () => {
    const missing = await readRun(fileByteSource(path.join(dir, 'nope.csv')));
    expect(missing.diagnostics[0].message).toContain('does not exist');
    const folder = path.join(dir, 'sub');
    mkdirSync(folder);
    const f = await readRun(fileByteSource(folder));
    expect(f.diagnostics[0].message).toContain('is a folder');
    const fifo = path.join(dir, 'pipe');
    const made = spawnSync('mkfifo', [fifo]);
    if (made.status === 0) {
      const r = await readRun(fileByteSource(fifo));
      expect(r.diagnostics[0].message).toContain('named pipe');
    } else {
      console.log('mkfifo is not available here: the FIFO case was not exercised');
    }
  });

  it('openRelative resolves beside the given file and returns undefined when nothing is there', async () => {
    const p = path.join(dir, 'run.csv');
    writeFileSync(p, 'time,north\n0,5\n');
    writeFileSync(`${p}.map.json`, '{"columns": {"north": "p_x"}, "anchors": "anchors.csv"}');
    writeFileSync(path.join(dir, 'anchors.csv'), 'id,x,y,z\n1,2,3,4\n');
    expect(openRelative('absent.csv', p)).toBeUndefined();
    const log = await readRun(fileByteSource(p), { open: openRelative });
    expect(log.state.columns.get('p_x')?.[0]).toBe(5);
    expect(log.anchors).toEqual([{ id: '1', p: [2, 3, 4] }]);
    expect(log.files).toEqual([p, `${p}.map.json`, path.join(dir, 'anchors.csv')]);
  });

  it('tails a growing file from LogReader.bytesRead', async () => {
    const p = path.join(dir, 'grow.csv');
    writeFileSync(p, 't,p_x\n0,1\n1,');
    const reader = new LogReader(p);
    for await (const c of fileByteSource(p).chunks()) reader.push(c);
    expect(reader.snapshot().state.length).toBe(1);
    appendFileSync(p, '2\n2,3\n');
    for await (const c of fileByteSource(p, { start: reader.bytesRead }).chunks()) reader.push(c);
    expect(Array.from(reader.finish().state.columns.get('p_x') ?? [])).toEqual([1, 2, 3]);
  });
});

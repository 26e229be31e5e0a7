// The plain baseline: read a file as a stream of 1 MiB chunks and count its newlines. usage: node newlines.mjs FILE
import { createReadStream } from 'node:fs';

let lines = 0;
let bytes = 0;
for await (const chunk of createReadStream(process.argv[2], { highWaterMark: 1 << 20 })) {
  bytes += chunk.length;
  for (let i = chunk.indexOf(10); i !== -1; i = chunk.indexOf(10, i + 1)) lines++;
}
process.stdout.write(JSON.stringify({ bytes, lines }) + '\n');

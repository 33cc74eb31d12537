// The floor: Node reads the file's bytes and does nothing with them.
import { createReadStream } from 'node:fs';

let bytes = 0;
createReadStream(process.argv[2], { highWaterMark: 1 << 20 })
  .on('data', (chunk) => {
    bytes += chunk.length;
  })
  .on('end', () => process.stdout.write(JSON.stringify({ bytes }) + '\n'));

// papaparse alone: a streaming parse of the CSV into arrays of strings, thrown away chunk by chunk.
import { createReadStream } from 'node:fs';
import Papa from 'papaparse';

let rows = 0;
Papa.parse(createReadStream(process.argv[2], { highWaterMark: 1 << 20 }), {
  delimiter: ',',
  comments: '#',
  skipEmptyLines: true,
  chunk(results) {
    rows += results.data.length;
  },
  complete() {
    // The header is the first parsed record.
    process.stdout.write(JSON.stringify({ rows: rows - 1 }) + '\n');
  },
  error(err) {
    process.stderr.write(`papaparse: ${err.message}\n`);
    process.exit(2);
  },
});

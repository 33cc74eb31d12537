/**
 * Throughput and memory of `starsieve check` on catalogs made by the sample generator.
 *
 *   npm run bench                 # 1M rows, CSV and Arrow
 *   npm run bench -- --rows 200000 --repeat 3
 *
 * Each measurement runs the real CLI in a child process (so peak RSS is the tool's own) several
 * times and reports the median. Results go to test-output/bench.json. Never part of `npm test`.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { makeSamples } from '../../sample-catalogs/make-samples.js';

const REPO = resolve(import.meta.dirname, '../..');
const { values } = parseArgs({
  options: { rows: { type: 'string', default: '1000000' }, repeat: { type: 'string', default: '3' }, seed: { type: 'string', default: '7' } },
});
const rows = Number(values.rows);
const repeat = Number(values.repeat);
const dir = join(tmpdir(), 'starsieve-bench');
mkdirSync(dir, { recursive: true });
const prefix = join(dir, `tw-${rows}`);

if (!existsSync(`${prefix}.csv`) || !existsSync(`${prefix}.arrow`)) {
  process.stdout.write(`generating ${rows.toLocaleString('en-US')} rows into ${dir} ...\n`);
  await makeSamples({ rows, seed: Number(values.seed), out: prefix, plant: true });
}

interface Measure {
  label: string;
  seconds: number;
  rowsPerSecond: number;
  mbPerSecond: number;
  peakRssMb: number;
}

/** Runs a command under GNU time to read the child's peak RSS; wall time from our own clock. */
function measure(label: string, file: string, args: string[]): Measure {
  const runs: { s: number; rss: number }[] = [];
  for (let k = 0; k < repeat; k++) {
    const t0 = process.hrtime.bigint();
    const r = spawnSync('/usr/bin/time', ['-f', '%M', process.execPath, ...args], { cwd: REPO, encoding: 'utf8', maxBuffer: 1 << 26 });
    const s = Number(process.hrtime.bigint() - t0) / 1e9;
    if (r.status !== 0 && r.status !== 1) throw new Error(`${label} failed (${r.status}): ${r.stderr}`);
    const rssKb = Number(r.stderr.trim().split('\n').pop());
    runs.push({ s, rss: rssKb / 1024 });
  }
  runs.sort((a, b) => a.s - b.s);
  const mid = runs[Math.floor(runs.length / 2)];
  const mb = statSync(file).size / 1e6;
  return { label, seconds: mid.s, rowsPerSecond: rows / mid.s, mbPerSecond: mb / mid.s, peakRssMb: Math.max(...runs.map((r) => r.rss)) };
}

if (!existsSync('/usr/bin/time')) {
  process.stderr.write('bench needs /usr/bin/time (Debian package "time") to read peak RSS\n');
  process.exit(2);
}

const bin = join(REPO, 'bin/starsieve.js');
const results: Measure[] = [
  measure('starsieve check, CSV', `${prefix}.csv`, [bin, 'check', `${prefix}.csv`, '--quiet', '--fail-on', 'never', '--report', join(dir, 'r-csv.json')]),
  measure('starsieve check, Arrow', `${prefix}.arrow`, [bin, 'check', `${prefix}.arrow`, '--quiet', '--fail-on', 'never', '--report', join(dir, 'r-arrow.json')]),
  measure('node read of the CSV (floor)', `${prefix}.csv`, ['-e', `let n=0;require('fs').createReadStream(${JSON.stringify(`${prefix}.csv`)}).on('data',c=>n+=c.length)`]),
];

const w = Math.max(...results.map((r) => r.label.length)) + 2;
process.stdout.write(`\n${rows.toLocaleString('en-US')} rows, median of ${repeat}\n`);
for (const r of results) {
  process.stdout.write(
    `${r.label.padEnd(w)}${r.seconds.toFixed(2).padStart(7)} s ${Math.round(r.rowsPerSecond).toLocaleString('en-US').padStart(12)} rows/s ${r.mbPerSecond.toFixed(1).padStart(7)} MB/s ${r.peakRssMb.toFixed(0).padStart(6)} MB peak RSS\n`,
  );
}
mkdirSync(join(REPO, 'test-output'), { recursive: true });
writeFileSync(join(REPO, 'test-output/bench.json'), JSON.stringify({ rows, repeat, node: process.version, results }, null, 2));

import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openCatalog } from '../../../cli/readers/open.js';
import { tempDir } from '../../helpers/cli.js';

describe('reader progress, for the progress line', () => {
  it('a CSV file reports bytes read out of its size, reaching the whole file', async () => {
    const p = join(tempDir(), 'p.csv');
    const text = 'id,mass\n' + Array.from({ length: 5000 }, (_, i) => `s${i},${(i % 50) / 10 + 0.1}`).join('\n') + '\n';
    writeFileSync(p, text);
    const r = await openCatalog(p, { batchSize: 500, readChunkBytes: 4096 } as never);
    const seen: number[] = [];
    for await (const _ of r.batches()) seen.push(r.progress!()!.done);
    const last = r.progress!()!;
    await r.close();
    expect(last).toEqual({ done: Buffer.byteLength(text), total: Buffer.byteLength(text), unit: 'bytes' });
    expect(seen.every((x, i) => i === 0 || x >= seen[i - 1])).toBe(true);
  });
});

import type { SpillLog } from '../../rules/engine/spill.js';

/** Every record and text of a log, partition by partition; closes it. */
export function drain(log: SpillLog): { records: number[]; texts: (string | null)[] }[] {
  const out = [];
  for (let p = 0; p < log.partitions; p++) {
    const { records, texts } = log.take(p);
    out.push({ records: [...records], texts });
  }
  log.close();
  return out;
}

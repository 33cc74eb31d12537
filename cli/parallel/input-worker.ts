/**
 * The body of a worker thread: one input, read, bound and checked as the task says. Findings go
 * back as messages; the main thread puts them in order and writes the reports.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { ALL_RULES } from '../../rules/checks/index.js';
import { InputRun, selectRules } from '../../rules/engine/runner.js';
import type { Batch, Finding } from '../../rules/engine/types.js';
import { toBatch } from '../binding/to-batch.js';
import { bindFromFirstBatch, boundMap, openInput, selectBound } from '../commands/input-steps.js';
import { openCsvRange } from '../readers/byte-range.js';
import { FILE_SPILL } from '../spill/file-spill.js';
import { BATCHES_IN_FLIGHT, type WorkerMessage, type WorkerTask } from './protocol.js';
import type { RawBatch } from '../readers/types.js';

const port = parentPort!;
const task = workerData as WorkerTask;
let credits = BATCHES_IN_FLIGHT;
let wake: (() => void) | null = null;
port.on('message', (m: { type: 'ack' }) => {
  if (m.type !== 'ack') return;
  credits++;
  wake?.();
  wake = null;
});

function send(m: WorkerMessage, transfer: ArrayBuffer[] = []): void {
  port.postMessage(m, transfer);
}

async function credit(): Promise<void> {
  while (credits <= 0) await new Promise<void>((r) => (wake = r));
  credits--;
}

/**
 * The memory of a batch's typed arrays, moved to the main thread rather than copied. Only arrays
 * that span their whole buffer are moved: a view into a larger buffer may share it with other
 * batches, and is copied instead.
 */
function ownedBuffers(batch: Batch): ArrayBuffer[] {
  const seen = new Set<ArrayBuffer>();
  const add = (a: ArrayBufferView | null | undefined) => {
    if (!a || !(a.buffer instanceof ArrayBuffer) || a.byteOffset !== 0 || a.byteLength !== a.buffer.byteLength) return;
    seen.add(a.buffer);
  };
  add(batch.lines);
  for (const q of Object.values(batch.quantities)) {
    if (!q) continue;
    for (const a of [q.value, q.raw, q.errLo, q.errHi, q.log, q.logErrLo, q.logErrHi, q.errRaw?.lo, q.errRaw?.hi]) add(a);
  }
  for (const m of Object.values(batch.unusable)) add(m);
  return [...seen];
}

/**
 * One byte range of a file, every rule: findings numbered within the range go back per batch, and
 * the rules' states at the end, for the run that finishes the input.
 */
async function runRange(range: NonNullable<WorkerTask['range']>): Promise<void> {
  const rules = selectRules(ALL_RULES, task.selection);
  const { reader, counts } = await openCsvRange(range.layout, range.bytes, { batchSize: task.reader.batchSize });
  try {
    selectBound(reader, range.binding);
    const found: Finding[] = [];
    const run = new InputRun(rules, task.selection, boundMap(range.binding), { push: (f) => found.push(f) }, undefined, undefined, FILE_SPILL, range.sample);
    for await (const raw of reader.batches()) {
      await credit();
      run.processBatch(toBatch(raw, range.binding, task.input));
      send({ type: 'findings', findings: found.splice(0), rows: raw.length, position: null });
    }
    send({ type: 'range-done', stats: { ...reader.stats }, notes: [...(reader.notes ?? [])], counts, state: run.saveState() });
  } finally {
    await reader.close();
  }
}

async function run(): Promise<void> {
  if (task.mode === 'range') return runRange(task.range!);
  const rules = selectRules(ALL_RULES, task.selection);
  const reader = await openInput(task.path, task.reader);
  try {
    const { it, ahead, binding, sampleBatch } = await bindFromFirstBatch(reader, task.bind, task.input);
    // The other half of a pipeline judges against the same sample.
    send({ type: 'bound', binding, sample: task.mode === 'whole' ? undefined : sampleBatch });
    const whole = task.mode === 'whole';
    const found: Finding[] = [];
    const rowsWithFindings = new Set<number>();
    const sink = {
      push(f: Finding) {
        found.push(f);
        if (f.row !== null) rowsWithFindings.add(f.row);
      },
    };
    const run = new InputRun(rules, task.selection, boundMap(binding), sink, whole ? undefined : { from: 0, to: task.splitAt }, undefined, FILE_SPILL, sampleBatch);
    const feed = async (raw: RawBatch) => {
      const batch = toBatch(raw, binding, task.input);
      await credit();
      const position = reader.progress?.() ?? null;
      if (whole) {
        run.processBatch(batch);
        send({ type: 'findings', findings: found.splice(0), rows: raw.length, position });
      } else {
        const findings = run.checkBatch(batch);
        send({ type: 'batch', batch, findings, position }, ownedBuffers(batch));
      }
    };
    for (const raw of ahead) await feed(raw);
    for (let r = await it.next(); !r.done; r = await it.next()) await feed(r.value);
    const reports = whole ? run.finish() : null;
    const part = whole ? null : run.finishPart();
    if (whole) send({ type: 'findings', findings: found.splice(0), rows: 0, position: null });
    send({ type: 'done', format: reader.format, stats: { ...reader.stats }, notes: [...(reader.notes ?? [])], part, reports, rowsWithFindings: rowsWithFindings.size });
  } finally {
    await reader.close();
  }
}

run().then(
  () => port.close(),
  (e: unknown) => {
    const err = e as Error & { path?: string; position?: string | null; column?: string | null };
    send({ type: 'error', name: err?.name ?? 'Error', message: err?.message ?? String(e), path: err?.path, position: err?.position, column: err?.column });
    port.close();
  },
);

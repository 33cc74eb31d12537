import { closeSync, fsyncSync, openSync, renameSync, rmSync, writeSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { describeIoError } from '../readers/common.js';

/** Temporary files not yet committed or aborted; removed if the process exits without either. */
const open = new Set<AtomicFile>();
let exitHook = false;

/**
 * A file write that failed, as one readable line naming the file the user asked for (not the
 * temporary one). Keeps the system error's code, so the CLI reports it as an I/O error (exit 2).
 */
export class OutputError extends Error {
  constructor(
    message: string,
    readonly code: string,
  ) {
    super(message);
    this.name = 'OutputError';
  }
}

function outputError(what: string, target: string, err: unknown): OutputError {
  const code = (err as { code?: unknown } | null)?.code;
  return new OutputError(`cannot ${what} ${target}: ${describeIoError(err)}`, typeof code === 'string' ? code : 'EIO');
}

/**
 * A file written through a temporary sibling and renamed into place on commit, so a reader never
 * sees half a report and an interrupted run leaves the previous report intact. The temporary file
 * sits in the target's folder (a rename across file systems would not be atomic) and nowhere
 * else. Writes are buffered and flushed synchronously in large chunks: simple, and far cheaper
 * than a stream per finding.
 */
export class AtomicFile {
  private readonly tmp: string;
  private fd: number | null;
  private pending: string[] = [];
  private pendingLength = 0;

  constructor(readonly target: string) {
    this.tmp = join(dirname(target), `.${basename(target)}.${process.pid}.tmp`);
    try {
      this.fd = openSync(this.tmp, 'w');
    } catch (err) {
      throw outputError('write', target, err);
    }
    open.add(this);
    if (!exitHook) {
      exitHook = true;
      // process.exit() (a signal handler, say) skips every finally block; this still runs.
      process.on('exit', () => {
        for (const f of open) f.abort();
      });
    }
  }

  write(text: string): void {
    this.pending.push(text);
    this.pendingLength += text.length;
    if (this.pendingLength >= 1 << 16) this.flush();
  }

  private flush(): void {
    if (this.fd === null || this.pending.length === 0) return;
    try {
      writeSync(this.fd, this.pending.join(''));
    } catch (err) {
      this.abort();
      throw outputError('write', this.target, err);
    }
    this.pending = [];
    this.pendingLength = 0;
  }

  commit(): void {
    if (this.fd === null) return;
    this.flush();
    try {
      fsyncSync(this.fd!);
      closeSync(this.fd!);
      this.fd = null;
      renameSync(this.tmp, this.target);
    } catch (err) {
      // A target that is a directory, a full disk: the earlier file stays, the temporary one goes.
      this.abort();
      throw outputError('write', this.target, err);
    }
    open.delete(this);
  }

  abort(): void {
    open.delete(this);
    if (this.fd !== null) {
      try {
        closeSync(this.fd);
      } catch {
        // Already closed by the failure that brought us here.
      }
      this.fd = null;
    }
    rmSync(this.tmp, { force: true });
  }
}

import { closeSync, fsyncSync, openSync, renameSync, rmSync, writeSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';

/**
 * A file written through a temporary sibling and renamed into place on commit, so a reader never
 * sees half a report and an interrupted run leaves the previous report intact. Writes are
 * buffered and flushed synchronously in large chunks: simple, and far cheaper than a stream per
 * finding.
 */
export class AtomicFile {
  private readonly tmp: string;
  private fd: number | null;
  private pending: string[] = [];
  private pendingLength = 0;

  constructor(readonly target: string) {
    this.tmp = join(dirname(target), `.${basename(target)}.${process.pid}.tmp`);
    this.fd = openSync(this.tmp, 'w');
  }

  write(text: string): void {
    this.pending.push(text);
    this.pendingLength += text.length;
    if (this.pendingLength >= 1 << 16) this.flush();
  }

  private flush(): void {
    if (this.fd === null || this.pending.length === 0) return;
    writeSync(this.fd, this.pending.join(''));
    this.pending = [];
    this.pendingLength = 0;
  }

  commit(): void {
    if (this.fd === null) return;
    this.flush();
    fsyncSync(this.fd);
    closeSync(this.fd);
    this.fd = null;
    renameSync(this.tmp, this.target);
  }

  abort(): void {
    if (this.fd === null) return;
    closeSync(this.fd);
    this.fd = null;
    rmSync(this.tmp, { force: true });
  }
}

/**
 * Exact-size reads from a byte stream: "give me the next 2880 bytes", "skip this HDU's data".
 * Chunks are kept as they arrive and joined only when a read straddles two of them, so reading
 * a big table costs one copy per batch at most.
 */
import type { Readable } from 'node:stream';

export class ByteQueue {
  private readonly source: AsyncIterator<Buffer>;
  private chunks: Buffer[] = [];
  /** Offset of the first unread byte in chunks[0]. */
  private offset = 0;
  private available = 0;
  private ended = false;
  /** Bytes handed out or skipped so far: the file offset of the next byte. */
  position = 0;

  constructor(
    private readonly stream: Readable,
    /** Turns a stream failure into the error the caller wants to throw (with its position). */
    private readonly onError: (err: unknown, position: number) => Error,
  ) {
    this.source = stream[Symbol.asyncIterator]() as AsyncIterator<Buffer>;
  }

  /** True when at least `n` bytes are buffered; false only at the end of the stream. */
  private async fill(n: number): Promise<boolean> {
    while (this.available < n && !this.ended) {
      let r: IteratorResult<Buffer>;
      try {
        r = await this.source.next();
      } catch (err) {
        throw this.onError(err, this.position + this.available);
      }
      if (r.done) {
        this.ended = true;
        break;
      }
      if (r.value.length === 0) continue;
      this.chunks.push(r.value);
      this.available += r.value.length;
    }
    return this.available >= n;
  }

  /** The next `n` bytes, or fewer where the stream ends first. The result may share memory with the queue's chunks. */
  async read(n: number): Promise<Buffer> {
    await this.fill(n);
    const take = Math.min(n, this.available);
    const first = this.chunks[0];
    let out: Buffer;
    if (take === 0) {
      out = Buffer.alloc(0);
    } else if (first.length - this.offset >= take) {
      out = first.subarray(this.offset, this.offset + take);
      this.advance(take);
    } else {
      out = Buffer.allocUnsafe(take);
      let got = 0;
      while (got < take) {
        const c = this.chunks[0];
        const part = Math.min(c.length - this.offset, take - got);
        c.copy(out, got, this.offset, this.offset + part);
        got += part;
        this.advance(part);
      }
    }
    return out;
  }

  /** Skips up to `n` bytes and returns how many were there. */
  async skip(n: number): Promise<number> {
    let left = n;
    while (left > 0) {
      if (this.available === 0 && !(await this.fill(1))) break;
      const c = this.chunks[0];
      const part = Math.min(c.length - this.offset, left);
      this.advance(part);
      left -= part;
    }
    return n - left;
  }

  private advance(n: number): void {
    this.offset += n;
    this.available -= n;
    this.position += n;
    while (this.chunks.length > 0 && this.offset >= this.chunks[0].length) {
      this.offset -= this.chunks[0].length;
      this.chunks.shift();
    }
  }

  close(): void {
    this.stream.destroy();
  }
}

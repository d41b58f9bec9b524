/**
 * Reads a byte stream (Buffer chunks; no `setEncoding`) piece by piece without holding more of it than the caller asks for: the
 * container reader needs a varint, then a block, then 16 bytes, each at a known file offset.
 */
export class StreamCursor {
  private buffer: Buffer = Buffer.alloc(0);
  private consumed = 0;

  constructor(private readonly chunks: AsyncIterator<Buffer>) {}

  /** Offset in the stream of the next unread byte. */
  get offset(): number {
    return this.consumed;
  }

  /** Buffers at least `count` bytes; false when the stream ends first. */
  async ensure(count: number): Promise<boolean> {
    if (this.buffer.length >= count) return true;
    const parts = [this.buffer];
    let total = this.buffer.length;
    let ended = false;
    while (total < count) {
      const next = await this.chunks.next();
      if (next.done === true) {
        ended = true;
        break;
      }
      parts.push(next.value);
      total += next.value.length;
    }
    this.buffer = parts.length === 1 ? this.buffer : Buffer.concat(parts, total);
    return !ended;
  }

  /** True when no byte is left. */
  async atEnd(): Promise<boolean> {
    return !(await this.ensure(1));
  }

  /** Bytes buffered and not yet read (at least what the last `ensure` asked for, unless the stream ended). */
  get available(): Buffer {
    return this.buffer;
  }

  /** Takes `count` buffered bytes; call `ensure(count)` first. */
  take(count: number): Buffer {
    const taken = this.buffer.subarray(0, count);
    this.buffer = this.buffer.subarray(count);
    this.consumed += taken.length;
    return taken;
  }
}

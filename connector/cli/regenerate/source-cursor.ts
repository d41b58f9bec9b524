import { RaretideError } from '../../../config/errors.js';
import type { BatchSource, InputMessage } from '../../pipeline/source-sink.js';

const READ_BATCH = 4096;

/**
 * Reads an input file forward once, handing out the source records at rising offsets: a replay writes
 * its outputs in input order, so every output's source lies at or after the previous one's. Records
 * in between are skipped undecoded; the last one handed out is kept, since several outputs (and
 * several regeneration batches) can come from one source record.
 */
export class SourceCursor {
  private batch: readonly InputMessage[] = [];
  private at = 0;
  private last: InputMessage | undefined;
  private ended = false;

  constructor(
    private readonly source: BatchSource,
    private readonly name: string,
  ) {}

  /** The record at `offset`, or undefined when the file ends before it. */
  async take(offset: bigint): Promise<InputMessage | undefined> {
    if (this.last !== undefined && offset <= this.last.offset) {
      if (offset === this.last.offset) return this.last;
      throw new RaretideError(
        'regenerate.offsets-backwards',
        `An output record's source offset ${offset} comes after one from offset ${this.last.offset}; a replay writes outputs in input order, so ${this.name} is read once, forward. Was the output re-sorted or concatenated?`,
      );
    }
    for (;;) {
      if (this.at === this.batch.length) {
        if (this.ended) return undefined;
        const next = await this.source.nextBatch(READ_BATCH);
        if (next === null) {
          this.ended = true;
          return undefined;
        }
        this.batch = next;
        this.at = 0;
        continue;
      }
      const message = this.batch[this.at++]!;
      if (message.offset === offset) {
        this.last = message;
        return message;
      }
    }
  }
}

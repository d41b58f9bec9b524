import { stat } from 'node:fs/promises';
import { basename } from 'node:path';
import { UsageError } from '../../config/errors.js';
import { ContainerFileReader } from '../avro/container/container-reader.js';
import type { ContainerCodec } from '../avro/container/container-format.js';
import type { KnownSchema } from '../avro/known-schema.js';
import type { AssignmentListener, BatchSource, InputMessage } from '../pipeline/source-sink.js';
import type { TopicPartition } from '../pipeline/topic-partition.js';

const NO_HEADERS: readonly never[] = Object.freeze([]);

export interface ContainerSourceOptions {
  /** Name standing in for the topic in provenance. @default the file's base name */
  readonly topic?: string;
}

/**
 * An Avro container file as a bounded source: one partition (0), offsets counting records from 0, no
 * keys, headers or timestamps. Records are handed on as their encoded bytes in the file's writer
 * schema, checked by the container reader's bounded scan but not decoded: the core decodes them with
 * raw framing of that schema, exactly as it decodes a raw-framed topic. A corrupt file fails the read
 * with the file name and byte offset.
 */
export class ContainerFileSource implements BatchSource {
  readonly partition: TopicPartition;
  private readonly blocks: AsyncIterator<Buffer[]>;
  /** Records of the current block not yet handed out. */
  private pending: Buffer[] = [];
  private pendingAt = 0;
  private listener: AssignmentListener | undefined;
  private assigned = false;
  private paused = false;
  private nextOffset = 0n;

  private constructor(
    private readonly reader: ContainerFileReader,
    /** Size of the file in bytes, for progress. */
    readonly totalBytes: number,
    topic: string,
  ) {
    this.partition = { topic, partition: 0 };
    this.blocks = reader.encodedBlocks();
  }

  static async open(path: string, options: ContainerSourceOptions = {}): Promise<ContainerFileSource> {
    const topic = options.topic ?? basename(path);
    if (topic === '') throw new UsageError(`Cannot name the source of ${JSON.stringify(path)} in provenance; give a file path.`);
    const reader = await ContainerFileReader.open(path);
    const { size } = await stat(path);
    return new ContainerFileSource(reader, size, topic);
  }

  /** The schema the file's records were written with. */
  get writer(): KnownSchema {
    return this.reader.header.writer;
  }

  /** The file's block compression. */
  get codec(): ContainerCodec {
    return this.reader.header.codec;
  }

  /** Bytes of the file read so far. */
  get bytesRead(): number {
    return this.reader.bytesRead;
  }

  onAssignment(listener: AssignmentListener): void {
    this.listener = listener;
  }

  async nextBatch(maxMessages: number): Promise<readonly InputMessage[] | null> {
    if (!this.assigned) {
      this.assigned = true;
      await this.listener?.assigned([this.partition]);
    }
    if (this.paused) return [];
    const { topic, partition } = this.partition;
    const batch: InputMessage[] = [];
    while (batch.length < maxMessages) {
      if (this.pendingAt === this.pending.length) {
        const next = await this.blocks.next();
        if (next.done === true) break;
        this.pending = next.value;
        this.pendingAt = 0;
        continue;
      }
      const value = this.pending[this.pendingAt++]!;
      batch.push({ topic, partition, offset: this.nextOffset, value, key: null, headers: NO_HEADERS, timestamp: undefined });
      this.nextOffset += 1n;
    }
    return batch.length === 0 ? null : batch;
  }

  pause(): void {
    this.paused = true;
  }

  resume(): void {
    this.paused = false;
  }

  async close(): Promise<void> {
    await this.blocks.return?.();
    this.reader.close();
  }
}

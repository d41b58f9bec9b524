/**
 * What the pipeline core needs from the edges, and nothing more. Kafka topics and Avro container files
 * implement these in their own adapters; the core never sees a Kafka client.
 *
 * One batch goes: `source.nextBatch` → plan, sample, guard, tag → `sink.send` → `sink.checkpoint`.
 * The delivery guarantee lives in how an adapter implements `checkpoint`: at-least-once waits for every
 * delivery report, writes the state, then commits the positions; exactly-once does all of it in one
 * transaction (outputs + state + offsets); a file sink flushes its block.
 */
import type { PartitionBalanceState } from './balance-state.js';
import type { TopicPartition } from './topic-partition.js';

/** A header as consumed: one name per object, in wire order, duplicates kept (node-rdkafka's shape). */
export type InputHeader = { readonly [name: string]: Buffer | string };

/** A header as produced: UTF-8 text only, since node-rdkafka does not carry header bytes safely. */
export type OutputHeader = { readonly [name: string]: string };

/** Where a source record sits: partition and offset (a file source counts records from 0). */
export interface SourceOffset extends TopicPartition {
  /** int64 on Kafka; bigint keeps every offset exact and flows unchanged into provenance. */
  readonly offset: bigint;
}

/** One source record, still encoded. */
export interface InputMessage extends SourceOffset {
  /** The framed Avro payload, as read. */
  readonly value: Buffer;
  /** The record key, or null when it has none. */
  readonly key: Buffer | null;
  readonly headers: readonly InputHeader[];
  /** Milliseconds since the epoch (the Kafka record timestamp), undefined where the source has none. */
  readonly timestamp: number | undefined;
}

/** Where to resume a partition: the next offset to read (last processed + 1), as Kafka commits it. */
export interface SourcePosition extends TopicPartition {
  readonly nextOffset: bigint;
}

/** Told about partitions coming and going, so the core can restore and persist their balance counts. */
export interface AssignmentListener {
  /** New partitions: the core loads their state (`BatchSink.loadState`) before any of their records arrive. */
  assigned(partitions: readonly TopicPartition[]): Promise<void>;
  /** Partitions about to go: the core finishes the batch and checkpoints them; the source waits for it. */
  revoked(partitions: readonly TopicPartition[]): Promise<void>;
}

export interface BatchSource {
  /**
   * Up to `maxMessages` records in source order per partition; an empty batch when none are ready yet (a
   * live topic); null once a bounded source (a replay up to the end offsets taken at start, a file) is done.
   */
  nextBatch(maxMessages: number): Promise<readonly InputMessage[] | null>;
  /**
   * Stop delivering new records until `resume` (the rate cap's `wait` policy). The source keeps its
   * consumer-group membership alive meanwhile; `nextBatch` returns empty batches while paused.
   */
  pause(): void;
  resume(): void;
  /** Registers the one listener for assignment changes; call before the first `nextBatch`. */
  onAssignment(listener: AssignmentListener): void;
  /** Stops reading and releases the source; positions are committed through the sink's checkpoints. */
  close(): Promise<void>;
}

/** Which stream an output message belongs to. */
export type OutputRoute = 'output' | 'dead-letter';

/** One record to write. */
export interface OutputMessage {
  readonly route: OutputRoute;
  /** The framed Avro payload (output), or the untouched source payload (dead-letter). */
  readonly value: Buffer;
  readonly key: Buffer | null;
  /** Provenance headers for output; the reason headers for dead-letter. */
  readonly headers: readonly OutputHeader[];
  /** Milliseconds since the epoch; undefined lets the sink stamp it. */
  readonly timestamp: number | undefined;
  /** The source record it comes from; its checkpoint covers this message. */
  readonly source: SourceOffset;
}

/** What a checkpoint makes durable, together with everything sent since the previous one. */
export interface Checkpoint {
  /** Next offset per partition processed in this batch. */
  readonly positions: readonly SourcePosition[];
  /** Balance counts of the partitions, as of the end of this batch. */
  readonly state: readonly PartitionBalanceState[];
}

/** A delivery acknowledgement for one output message (for metrics such as delivery latency). */
export interface DeliveryReport {
  readonly message: OutputMessage;
  /** When the sink learned of the delivery, in the sink's clock's milliseconds. */
  readonly deliveredAt: number;
  /** Set when the message was not delivered; the next checkpoint then fails. */
  readonly error: Error | undefined;
}

export interface BatchSink {
  /** The last persisted balance state per partition (undefined where none), in the order asked. */
  loadState(partitions: readonly TopicPartition[]): Promise<(PartitionBalanceState | undefined)[]>;
  /**
   * Queues messages for writing. Resolves once they are queued (it waits while the sink's buffer is full);
   * that they were written is only certain after the next `checkpoint`.
   */
  send(messages: readonly OutputMessage[]): Promise<void>;
  /**
   * Makes everything sent since the last checkpoint durable, with the state and the positions — atomically
   * where the sink can (exactly-once), else outputs first, then state, then positions (at-least-once), so a
   * crash repeats outputs but never loses one. Rejects when any of it failed; the core then calls `abort`
   * and resumes from the last checkpoint.
   */
  checkpoint(checkpoint: Checkpoint): Promise<void>;
  /** Drops what was sent since the last checkpoint where the sink can (aborts the transaction). */
  abort(): Promise<void>;
  /** Registers a listener for per-message delivery acknowledgements (optional for the core to use). */
  onDelivery(listener: (report: DeliveryReport) => void): void;
  /** Flushes what is pending, then releases the sink. */
  close(): Promise<void>;
}

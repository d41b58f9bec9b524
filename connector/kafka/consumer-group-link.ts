import type { KafkaConsumer } from 'node-rdkafka';

import type { SourcePosition } from '../pipeline/source-sink.js';

/**
 * What the producer sink needs from the group consumer whose positions its checkpoints make durable.
 * `KafkaConsumerSource` implements it; a sink without one (a replay into a topic) commits no positions.
 */
export interface ConsumerGroupLink {
  /**
   * The consumer whose group metadata goes into `sendOffsetsToTransaction`: the broker then fences a
   * zombie of this member through the group generation (KIP-447).
   */
  readonly consumer: KafkaConsumer;
  /**
   * Commits `positions` in the group (at-least-once). May return before the broker answers; a failed
   * commit then fails a later call.
   */
  commit(positions: readonly SourcePosition[]): Promise<void>;
  /** Records positions that a committed transaction made durable (exactly-once). */
  committedInTransaction(positions: readonly SourcePosition[]): void;
  /**
   * Seeks every partition read since the last successful checkpoint back to that checkpoint's position
   * (or to the first offset read since it was assigned), so the records of an aborted batch are read again.
   */
  rewindToCommitted(): Promise<void>;
}

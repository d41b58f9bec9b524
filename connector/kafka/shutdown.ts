/**
 * The clean shutdown order for a Kafka source and sink (NODE-RDKAFKA.md, "Consumption"): stop the consume
 * loop → abort any open transaction → flush the producer and check the result → disconnect. Positions
 * are committed by checkpoints, so the core checkpoints its last batch before calling this.
 */
import { RaretideError } from '../../config/errors.js';
import type { BatchSink } from '../pipeline/source-sink.js';
import { withDeadline } from './callback-promise.js';
import type { KafkaConsumerSource } from './consumer-source.js';

export interface KafkaShutdownParts {
  /** The group source (stopped first, disconnected last) or any other source (closed last). */
  readonly source: KafkaConsumerSource | { close(): Promise<void> };
  readonly sink: BatchSink;
  /**
   * The whole shutdown's bound; a step still running then is abandoned.
   * @default 30000
   */
  readonly timeoutMs?: number;
}

/** Runs every step even when one fails; rejects afterwards with the first failure. */
export async function shutdownKafkaAdapters({ source, sink, timeoutMs = 30_000 }: KafkaShutdownParts): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  const left = () => Math.max(1, deadline - Date.now());
  const failures: unknown[] = [];
  const step = async (what: string, run: () => Promise<void>) => {
    try {
      await withDeadline(what, left(), run());
    } catch (error) {
      failures.push(error);
    }
  };
  if ('stop' in source) await step('stopping the consume loop', () => source.stop());
  await step('closing the sink (abort, flush, disconnect)', () => sink.close());
  await step('closing the source', () => source.close());
  const [first] = failures;
  if (first !== undefined) {
    throw first instanceof RaretideError ? first : new RaretideError('kafka.shutdown', `shutdown did not finish cleanly: ${(first as Error).message}`, { retriable: false, cause: first });
  }
}

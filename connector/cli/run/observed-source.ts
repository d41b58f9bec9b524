/**
 * The worker's source as the runner sees it: the Kafka source, plus hooks at the points the worker
 * must act on. Each `nextBatch` call is one turn of the loop — after the previous batch was sent and
 * checkpointed, before the next is read — which is where the heartbeat beats and a new model is swapped
 * in. New partitions are reported after the runner has restored their balance counts.
 *
 * It listens to the Kafka source from construction on, before the sink and the runner exist: an
 * assignment arriving in between waits for the runner's listener instead of finding none (and leaving
 * partitions without their balance counts).
 */
import type { AssignmentListener, BatchSource, InputMessage } from '../../pipeline/source-sink.js';
import type { TopicPartition } from '../../pipeline/topic-partition.js';

export interface SourceHooks {
  /** The loop turns: between two batches, or on an idle poll. */
  turn(): void;
  /** Partitions arrived, their balance counts restored. */
  assigned(partitions: readonly TopicPartition[]): void;
}

export class ObservedSource implements BatchSource {
  private readonly listener: Promise<AssignmentListener>;
  private registerListener!: (listener: AssignmentListener) => void;

  constructor(
    private readonly inner: BatchSource,
    private readonly hooks: SourceHooks,
  ) {
    this.listener = new Promise((resolve) => {
      this.registerListener = resolve;
    });
    inner.onAssignment({
      assigned: async (partitions) => {
        await (await this.listener).assigned(partitions);
        hooks.assigned(partitions);
      },
      revoked: async (partitions) => (await this.listener).revoked(partitions),
    });
  }

  nextBatch(maxMessages: number): Promise<readonly InputMessage[] | null> {
    this.hooks.turn();
    return this.inner.nextBatch(maxMessages);
  }

  pause(): void {
    this.inner.pause();
  }

  resume(): void {
    this.inner.resume();
  }

  onAssignment(listener: AssignmentListener): void {
    this.registerListener(listener);
  }

  close(): Promise<void> {
    return this.inner.close();
  }
}

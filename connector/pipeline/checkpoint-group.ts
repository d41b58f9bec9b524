/**
 * Batches processed while the previous checkpoint was still running, waiting to be sent and then
 * checkpointed as one: their outputs in order, the highest position per partition, and the balance
 * state of the last batch boundary. When the sink's acknowledgements take longer than processing a
 * batch, checkpoints then cover two or more batches instead of holding every batch up.
 */
import type { PartitionBalanceState } from './balance-state.js';
import type { BatchAccounting } from './accounting.js';
import type { BatchResult } from './core.js';
import type { Checkpoint, InputMessage, OutputMessage, SourcePosition } from './source-sink.js';
import { comparePartitions, partitionKey } from './topic-partition.js';

/** One checkpointed batch, as the runner reports it. */
export interface BatchReport {
  readonly accounting: BatchAccounting;
  readonly outputs: number;
  readonly positions: readonly SourcePosition[];
}

export class CheckpointGroup {
  /** The outputs of every batch, in batch order. */
  readonly outputs: OutputMessage[] = [];
  /** One report per batch, for the runner's totals and `onBatch` once the checkpoint succeeded. */
  readonly reports: BatchReport[] = [];
  /** Source records of every batch. */
  records = 0;
  /** Settles once the group is checkpointed, or will never be: what a revocation waits for. */
  readonly settled: Promise<void>;
  private readonly highest = new Map<string, SourcePosition>();
  private state: readonly PartitionBalanceState[] = [];
  private settle!: () => void;

  constructor() {
    this.settled = new Promise((resolve) => {
      this.settle = resolve;
    });
  }

  /** Adds a processed batch and the balance state snapshotted right after it. */
  add(batch: readonly InputMessage[], { outputs, accounting }: BatchResult, state: readonly PartitionBalanceState[]): void {
    const positions = positionsOf(batch);
    for (const position of positions) this.highest.set(partitionKey(position), position);
    for (const output of outputs) this.outputs.push(output);
    this.reports.push({ accounting, outputs: outputs.length, positions });
    this.records += batch.length;
    this.state = state;
  }

  /** What the checkpoint makes durable: positions past every batch, the state after the last one. */
  checkpoint(): Checkpoint {
    return { positions: [...this.highest.values()].sort(comparePartitions), state: this.state };
  }

  finish(): void {
    this.settle();
  }
}

/** Next offset per partition of the batch, in partition order. */
export function positionsOf(batch: readonly InputMessage[]): SourcePosition[] {
  const highest = new Map<string, InputMessage>();
  const settle = (message: InputMessage) => {
    const key = partitionKey(message);
    const current = highest.get(key);
    if (current === undefined || message.offset > current.offset) highest.set(key, message);
  };
  // Runs of one partition are the common case: the map is consulted once per run, not per message.
  let run: InputMessage | undefined;
  for (const message of batch) {
    if (run !== undefined && run.partition === message.partition && run.topic === message.topic) {
      if (message.offset > run.offset) run = message;
      continue;
    }
    if (run !== undefined) settle(run);
    run = message;
  }
  if (run !== undefined) settle(run);
  return [...highest.values()].map(({ topic, partition, offset }) => ({ topic, partition, nextOffset: offset + 1n })).sort(comparePartitions);
}

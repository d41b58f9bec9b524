/**
 * The loop shared by `run` and `replay`: read a batch, run it through the core, send the outputs
 * (holding them back under the rate cap's `wait` policy), checkpoint positions with the balance state,
 * repeat. Partitions coming and going restore and persist their balance counts through the sink.
 *
 * Stopping: an aborted `signal` ends the loop after the batch in hand is sent and checkpointed. A failed
 * checkpoint aborts what the sink holds uncommitted and surfaces a retriable error: the caller resumes
 * from the last checkpoint, restoring the balance counts saved with it.
 */
import { RaretideError } from '../../config/errors.js';
import { PipelineCounters, type BatchAccounting } from './accounting.js';
import type { BalanceController } from './balance.js';
import type { PipelineCore } from './core.js';
import { PROVENANCE_HEADERS } from './provenance.js';
import type { TokenBucket } from './rate-limit.js';
import type { BatchSink, BatchSource, Checkpoint, InputMessage, OutputMessage, SourcePosition } from './source-sink.js';
import { comparePartitions, partitionKey, type TopicPartition } from './topic-partition.js';

/** The runner neither opens nor closes the source and sink: the command that made them does. */
export interface RunnerOptions {
  readonly source: BatchSource;
  readonly sink: BatchSink;
  readonly core: PipelineCore;
  /** The controller the core plans with; the runner assigns and revokes its partitions. */
  readonly balance: BalanceController;
  /** Most source records per batch. */
  readonly batchSize: number;
  /** Rate cap with policy `wait`: outputs are sent as tokens allow, consumption paused meanwhile. */
  readonly rateWait?: TokenBucket;
  /** Waits `ms` milliseconds (a fake in tests). @default setTimeout */
  readonly sleep?: (ms: number) => Promise<void>;
  /** Abort to stop after the current batch. */
  readonly signal?: AbortSignal;
  /** Where totals accumulate (pass one to read them while running). @default a new one */
  readonly counters?: PipelineCounters;
  /** Called after each checkpointed batch. */
  readonly onBatch?: (report: BatchReport) => void;
}

export interface BatchReport {
  readonly accounting: BatchAccounting;
  readonly outputs: number;
  readonly positions: readonly SourcePosition[];
}

export interface RunOutcome {
  /** `end-of-source`: a bounded source is exhausted; `signal`: stopped on request. */
  readonly stoppedBy: 'end-of-source' | 'signal';
  readonly counters: PipelineCounters;
}

export class PipelineRunner {
  readonly counters: PipelineCounters;
  private readonly sleep: (ms: number) => Promise<void>;
  /** The batch being processed, sent and checkpointed; a revocation waits for it. */
  private inFlight: Promise<void> = Promise.resolve();

  constructor(private readonly options: RunnerOptions) {
    this.counters = options.counters ?? new PipelineCounters();
    this.sleep = options.sleep ?? ((ms) => new Promise((resolve) => setTimeout(resolve, ms)));
    options.source.onAssignment({
      assigned: (partitions) => this.assigned(partitions),
      revoked: (partitions) => this.revoked(partitions),
    });
  }

  async run(): Promise<RunOutcome> {
    const { source, batchSize, signal } = this.options;
    while (signal?.aborted !== true) {
      const batch = await source.nextBatch(batchSize);
      if (batch === null) return { stoppedBy: 'end-of-source', counters: this.counters };
      if (batch.length === 0) continue;
      this.inFlight = this.handle(batch);
      await this.inFlight;
    }
    return { stoppedBy: 'signal', counters: this.counters };
  }

  private async handle(batch: readonly InputMessage[]): Promise<void> {
    const { core, sink, balance } = this.options;
    const { outputs, accounting } = await core.processBatch(batch);
    await this.send(outputs);
    const checkpoint: Checkpoint = { positions: positionsOf(batch), state: balance.snapshot() };
    try {
      await sink.checkpoint(checkpoint);
    } catch (cause) {
      await sink.abort();
      throw new RaretideError(
        'pipeline.checkpoint-failed',
        `Checkpoint after ${batch.length} records failed (${(cause as Error).message}); the outputs since the last checkpoint were aborted. Resume from the last checkpoint, with the balance state saved there.`,
        { retriable: true, cause },
      );
    }
    this.counters.add(accounting);
    this.counters.checkpoints += 1;
    this.options.onBatch?.({ accounting, outputs: outputs.length, positions: checkpoint.positions });
  }

  /**
   * Sends the outputs in order; under the `wait` policy, in chunks of as many synthetic records as the
   * bucket grants, waiting (source paused) between chunks. Nothing is skipped.
   */
  private async send(outputs: readonly OutputMessage[]): Promise<void> {
    const { sink, source, rateWait } = this.options;
    let remaining = rateWait === undefined ? 0 : outputs.filter(isSynthetic).length;
    if (rateWait === undefined || remaining === 0) {
      await sink.send(outputs);
      return;
    }
    let start = 0;
    let paused = false;
    try {
      for (;;) {
        const { granted, waitMs } = rateWait.acquire(remaining);
        const end = afterSynthetic(outputs, start, granted);
        if (end > start) await sink.send(outputs.slice(start, end));
        start = end;
        remaining -= granted;
        if (remaining === 0) break;
        if (!paused) source.pause();
        paused = true;
        this.counters.rateWaitMs += waitMs;
        await this.sleep(waitMs);
      }
      if (start < outputs.length) await sink.send(outputs.slice(start));
    } finally {
      if (paused) source.resume();
    }
  }

  private async assigned(partitions: readonly TopicPartition[]): Promise<void> {
    const states = await this.options.sink.loadState(partitions);
    partitions.forEach((partition, index) => this.options.balance.assign(partition, states[index]));
  }

  private async revoked(partitions: readonly TopicPartition[]): Promise<void> {
    // The batch in hand finishes and checkpoints first, so the revoked counts are those persisted.
    await this.inFlight.catch(() => undefined);
    const owned = new Set(this.options.balance.owned().map(partitionKey));
    for (const partition of partitions) {
      if (owned.has(partitionKey(partition))) this.options.balance.revoke(partition);
    }
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

function isSynthetic(message: OutputMessage): boolean {
  return message.route === 'output' && message.headers.some((header) => header[PROVENANCE_HEADERS.kind] === 'synthetic');
}

/** Index just past the `count`-th synthetic record from `start` (or `start` itself when count is 0). */
function afterSynthetic(outputs: readonly OutputMessage[], start: number, count: number): number {
  let seen = 0;
  let index = start;
  while (seen < count && index < outputs.length) {
    if (isSynthetic(outputs[index]!)) seen += 1;
    index += 1;
  }
  return index;
}

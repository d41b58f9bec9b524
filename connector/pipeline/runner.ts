/**
 * The loop shared by `run` and `replay`: read a batch, run it through the core, send the outputs
 * (holding them back under the rate cap's `wait` policy), checkpoint positions with the balance state,
 * repeat. Partitions coming and going restore and persist their balance counts through the sink.
 *
 * A checkpoint runs while the next batch is read and processed: waiting for the broker's
 * acknowledgements (or a transaction's commit) was the longest step of a batch, and the next read and
 * model call do not depend on it. Outputs are sent only once the previous checkpoint has succeeded, so
 * a sink never holds two checkpoints' outputs (one open transaction, one delivery interval at a time).
 * Batches processed while a checkpoint still runs wait and go out together, checkpointed as one
 * (checkpoint-group.ts), up to `MAX_GROUP_BATCHES`. The balance state is snapshotted at every batch
 * boundary as before, so the outputs, their order and their provenance are those of a one-batch-at-a-time
 * loop; only how many batches one checkpoint covers depends on timing.
 *
 * Stopping: an aborted `signal` ends the loop once the batches processed are sent and checkpointed; a
 * batch read but not yet processed is dropped, uncommitted, for the next reader. A failed checkpoint
 * aborts what the sink holds uncommitted and surfaces a retriable error: the caller resumes from the
 * last checkpoint, restoring the balance counts saved with it (batches processed since are discarded
 * with the session's controller).
 */
import { RaretideError } from '../../config/errors.js';
import { PipelineCounters } from './accounting.js';
import type { BalanceController } from './balance.js';
import { CheckpointGroup, type BatchReport } from './checkpoint-group.js';
import type { PipelineCore } from './core.js';
import { PROVENANCE_HEADERS } from './provenance.js';
import type { TokenBucket } from './rate-limit.js';
import type { BatchSink, BatchSource, InputMessage, OutputMessage } from './source-sink.js';
import { partitionKey, type TopicPartition } from './topic-partition.js';

export type { BatchReport } from './checkpoint-group.js';

/** Most batches one checkpoint covers: bounds what waits in memory while the sink is slow. */
export const MAX_GROUP_BATCHES = 4;

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
  /** Called for each batch once it is checkpointed. */
  readonly onBatch?: (report: BatchReport) => void;
}

export interface RunOutcome {
  /** `end-of-source`: a bounded source is exhausted; `signal`: stopped on request. */
  readonly stoppedBy: 'end-of-source' | 'signal';
  readonly counters: PipelineCounters;
}

export class PipelineRunner {
  readonly counters: PipelineCounters;
  private readonly sleep: (ms: number) => Promise<void>;
  /** Every batch handed out so far, checkpointed (or failed); a revocation waits for it. */
  private inFlight: Promise<unknown> = Promise.resolve();
  /** Batches processed and not yet sent. */
  private waiting: CheckpointGroup | undefined;
  /** The last checkpoint: settles with its failure, or undefined once it succeeded. */
  private checkpointing: Promise<Error | undefined> = Promise.resolve(undefined);
  private checkpointRunning = false;

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
    let stoppedBy: RunOutcome['stoppedBy'] = 'signal';
    const stopping = () => signal?.aborted === true;
    try {
      while (!stopping()) {
        const batch = await source.nextBatch(batchSize);
        if (batch === null) {
          stoppedBy = 'end-of-source';
          break;
        }
        if (stopping()) break;
        if (batch.length > 0) await this.process(batch);
        const waiting = this.waiting;
        if (waiting === undefined) continue;
        // Grow the group while the last checkpoint runs; send it once that is done, when full, or when idle.
        if (batch.length === 0 || !this.checkpointRunning || waiting.reports.length >= MAX_GROUP_BATCHES) await this.sendWaiting();
      }
      await this.sendWaiting();
      await raise(this.checkpointing);
    } catch (error) {
      // Nothing may outlive the loop: the caller closes the sink next. A failed checkpoint came first.
      const failure = await this.checkpointing;
      this.waiting?.finish();
      throw failure ?? error;
    }
    return { stoppedBy, counters: this.counters };
  }

  /** Runs `batch` through the core into the waiting group, with the balance state right after it. */
  private async process(batch: readonly InputMessage[]): Promise<void> {
    const { core, balance } = this.options;
    const group = (this.waiting ??= new CheckpointGroup());
    this.inFlight = group.settled;
    const result = await core.processBatch(batch);
    // Every batch boundary gets its snapshot (a snapshot rebases the counts), persisted or not.
    group.add(batch, result, balance.snapshot());
  }

  /** Once the last checkpoint succeeded: sends the waiting group and starts its checkpoint, not waiting for it. */
  private async sendWaiting(): Promise<void> {
    const group = this.waiting;
    if (group === undefined) return;
    await raise(this.checkpointing);
    await this.send(group.outputs);
    this.waiting = undefined;
    this.checkpointRunning = true;
    this.checkpointing = this.checkpoint(group).then(
      () => undefined,
      (error: Error) => error,
    );
    void this.checkpointing.then(() => {
      this.checkpointRunning = false;
      group.finish();
    });
  }

  private async checkpoint(group: CheckpointGroup): Promise<void> {
    const { sink } = this.options;
    try {
      await sink.checkpoint(group.checkpoint());
    } catch (cause) {
      await sink.abort();
      throw new RaretideError(
        'pipeline.checkpoint-failed',
        `Checkpoint after ${group.records} records failed (${(cause as Error).message}); the outputs since the last checkpoint were aborted. Resume from the last checkpoint, with the balance state saved there.`,
        { retriable: true, cause },
      );
    }
    this.counters.checkpoints += 1;
    for (const report of group.reports) {
      this.counters.add(report.accounting);
      this.options.onBatch?.(report);
    }
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

/** Throws the failure a settled checkpoint promise carries, if any. */
async function raise(checkpointing: Promise<Error | undefined>): Promise<void> {
  const failure = await checkpointing;
  if (failure !== undefined) throw failure;
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

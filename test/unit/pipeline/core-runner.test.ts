import { describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import type { PartitionBalanceState } from '../../../connector/pipeline/balance-state.js';
import { BalanceController } from '../../../connector/pipeline/balance.js';
import { PipelineCore } from '../../../connector/pipeline/core.js';
import { PROVENANCE_HEADERS } from '../../../connector/pipeline/provenance.js';
import { TokenBucket } from '../../../connector/pipeline/rate-limit.js';
import { MAX_GROUP_BATCHES, PipelineRunner, type BatchReport, type RunnerOptions } from '../../../connector/pipeline/runner.js';
import type {
  AssignmentListener,
  BatchSink,
  BatchSource,
  Checkpoint,
  DeliveryReport,
  InputMessage,
  OutputMessage,
} from '../../../connector/pipeline/source-sink.js';
import { partitionKey, type TopicPartition } from '../../../connector/pipeline/topic-partition.js';
import { waitFor } from '../../support/wait-for.js';
import { messagesOf, sorterEvents, sorterPipeline } from './support/sorter-events.js';

const TOPIC = 'sorter.events';
const P0: TopicPartition = { topic: TOPIC, partition: 0 };
const P1: TopicPartition = { topic: TOPIC, partition: 1 };

/** Hands out fixed batches; tells its listener about `partitions` before the first. */
class MemorySource implements BatchSource {
  listener: AssignmentListener | undefined;
  paused = false;
  readonly pauses: boolean[] = [];
  /** Batches handed out so far. */
  index = 0;

  constructor(
    private readonly batches: readonly (readonly InputMessage[])[],
    private readonly partitions: readonly TopicPartition[],
  ) {}

  onAssignment(listener: AssignmentListener): void {
    this.listener = listener;
  }

  async nextBatch(): Promise<readonly InputMessage[] | null> {
    if (this.index === 0) await this.listener!.assigned(this.partitions);
    return this.batches[this.index++] ?? null;
  }

  pause(): void {
    this.paused = true;
    this.pauses.push(true);
  }

  resume(): void {
    this.paused = false;
    this.pauses.push(false);
  }

  async close(): Promise<void> {}
}

/** Keeps what it is sent; can hold a send open, fail a checkpoint, and serve stored state. */
class MemorySink implements BatchSink {
  readonly sent: OutputMessage[][] = [];
  readonly checkpoints: Checkpoint[] = [];
  aborted = 0;
  failCheckpoint = false;
  holdSend: Promise<void> | undefined;
  /** Holds checkpoints open while set (the broker's acknowledgements taking long). */
  holdCheckpoint: Promise<void> | undefined;
  readonly stored = new Map<string, PartitionBalanceState>();

  async loadState(partitions: readonly TopicPartition[]): Promise<(PartitionBalanceState | undefined)[]> {
    return partitions.map((partition) => this.stored.get(partitionKey(partition)));
  }

  async send(messages: readonly OutputMessage[]): Promise<void> {
    this.sent.push([...messages]);
    await this.holdSend;
  }

  async checkpoint(checkpoint: Checkpoint): Promise<void> {
    await this.holdCheckpoint;
    if (this.failCheckpoint) throw new Error('broker said no');
    this.checkpoints.push(checkpoint);
  }

  async abort(): Promise<void> {
    this.aborted += 1;
  }

  onDelivery(_listener: (report: DeliveryReport) => void): void {}

  async close(): Promise<void> {}
}

function pipeline(targets: Record<string, number> = { jam: 0.1 }): { core: PipelineCore; balance: BalanceController } {
  return sorterPipeline({ targets, seed: 5, temperature: 1, includeOriginals: true });
}

function batchesOf(messages: readonly InputMessage[], size: number): InputMessage[][] {
  const batches: InputMessage[][] = [];
  for (let start = 0; start < messages.length; start += size) batches.push(messages.slice(start, start + size));
  return batches;
}

function runnerFor(source: BatchSource, sink: BatchSink, extra: Partial<RunnerOptions> = {}): { runner: PipelineRunner; balance: BalanceController } {
  const { core, balance } = pipeline();
  return { runner: new PipelineRunner({ source, sink, core, balance, batchSize: 100, ...extra }), balance };
}

const isSynthetic = (message: OutputMessage) => message.headers.some((header) => header[PROVENANCE_HEADERS.kind] === 'synthetic');

describe('PipelineRunner', () => {
  it('sends every batch, then checkpoints its positions with the balance state of every owned partition', async () => {
    const messages = messagesOf(sorterEvents(600, { jam: 0.03 }, 2), 2);
    const source = new MemorySource(batchesOf(messages, 200), [P0, P1]);
    const sink = new MemorySink();
    const { runner } = runnerFor(source, sink);
    const outcome = await runner.run();
    expect(outcome.stoppedBy).toBe('end-of-source');
    expect(sink.checkpoints).toHaveLength(3);
    expect(sink.checkpoints[2]!.positions).toEqual([
      { ...P0, nextOffset: 300n },
      { ...P1, nextOffset: 300n },
    ]);
    const last = sink.checkpoints[2]!.state;
    expect(last.map((state) => state.partition)).toEqual([0, 1]);
    const originals = last.reduce((sum, state) => sum + Object.values(state.originals).reduce((a, b) => a + b, 0), 0);
    expect(originals).toBe(600);
    const sent = sink.sent.flat();
    expect(sent.filter(isSynthetic).length).toBe(outcome.counters.total('synthetic'));
    expect(outcome.counters.records).toBe(600);
    expect(outcome.counters.checkpoints).toBe(3);
  });

  it('restores the stored balance state of assigned partitions', async () => {
    const sink = new MemorySink();
    sink.stored.set(partitionKey(P0), { version: 1, ...P0, originals: { ok: 900, jam: 10 }, synthetic: { jam: 40 }, capped: {} });
    const source = new MemorySource([], [P0]);
    const { runner, balance } = runnerFor(source, sink);
    await runner.run();
    expect(balance.shares().find((share) => share.label === 'jam')).toMatchObject({ originals: 10, synthetic: 40 });
  });

  it('lets a revocation wait for the batch in hand to be checkpointed, then gives the partition up', async () => {
    const source = new MemorySource([messagesOf(sorterEvents(50, {}, 3))], [P0]);
    const sink = new MemorySink();
    let release: () => void = () => undefined;
    sink.holdSend = new Promise((resolve) => (release = resolve));
    const { runner, balance } = runnerFor(source, sink);
    const running = runner.run();
    await waitFor(() => sink.sent.length === 1, { what: 'the batch to be sent', timeoutMs: 5000, intervalMs: 1 });
    let revoked = false;
    const revocation = source.listener!.revoked([P0]).then(() => (revoked = true));
    await Promise.resolve();
    expect(revoked).toBe(false);
    expect(balance.owned()).toEqual([P0]);
    release();
    await revocation;
    expect(sink.checkpoints).toHaveLength(1);
    expect(balance.owned()).toEqual([]);
    await running;
  });

  it('aborts the sink and surfaces a retriable error when a checkpoint fails', async () => {
    const source = new MemorySource([messagesOf(sorterEvents(20, {}, 4))], [P0]);
    const sink = new MemorySink();
    sink.failCheckpoint = true;
    const { runner } = runnerFor(source, sink);
    const error = await runner.run().catch((caught: unknown) => caught);
    expect(error).toBeInstanceOf(RaretideError);
    expect(error).toMatchObject({ code: 'pipeline.checkpoint-failed', retriable: true });
    expect((error as Error).message).toMatch(/broker said no/);
    expect(sink.aborted).toBe(1);
    expect(runner.counters.records).toBe(0);
  });

  it('stops after the current batch, checkpointed, when the signal is aborted', async () => {
    const messages = messagesOf(sorterEvents(300, {}, 5));
    const source = new MemorySource(batchesOf(messages, 100), [P0]);
    const sink = new MemorySink();
    const stop = new AbortController();
    const { runner } = runnerFor(source, sink, { signal: stop.signal, onBatch: () => stop.abort() });
    const outcome = await runner.run();
    expect(outcome.stoppedBy).toBe('signal');
    expect(sink.checkpoints).toHaveLength(1);
    expect(sink.checkpoints[0]!.positions).toEqual([{ ...P0, nextOffset: 100n }]);
  });

  it('under policy wait, sends synthetic records as tokens allow, paused meanwhile, and skips none', async () => {
    let now = 0;
    const clock = { now: () => now };
    const bucket = new TokenBucket({ perSecond: 10, burst: 4 }, clock);
    const sleeps: number[] = [];
    const sleep = async (ms: number) => {
      sleeps.push(ms);
      now += ms;
    };
    const source = new MemorySource([messagesOf(sorterEvents(400, { jam: 0.05 }, 6))], [P0]);
    const sink = new MemorySink();
    const sendTimes: number[] = [];
    const send = sink.send.bind(sink);
    sink.send = async (messages) => {
      sendTimes.push(now);
      await send(messages);
    };
    const { runner } = runnerFor(source, sink, { rateWait: bucket, sleep });
    await runner.run();
    const synthetic = runner.counters.total('synthetic');
    expect(synthetic).toBeGreaterThan(8);
    expect(sink.sent.flat().filter(isSynthetic)).toHaveLength(synthetic);
    expect(runner.counters.total('thinned')).toBe(0);
    // Token bucket bound: by time t at most burst + rate·t tokens were handed out.
    let emitted = 0;
    sink.sent.forEach((chunk, index) => {
      emitted += chunk.filter(isSynthetic).length;
      expect(emitted).toBeLessThanOrEqual(4 + (10 * sendTimes[index]!) / 1000 + 1e-9);
    });
    expect(sleeps.length).toBeGreaterThan(0);
    expect(source.pauses[0]).toBe(true);
    expect(source.pauses.at(-1)).toBe(false);
    expect(runner.counters.rateWaitMs).toBe(sleeps.reduce((a, b) => a + b, 0));
  });

  it('while a checkpoint runs, processes the next batches and sends them together, checkpointed as one', async () => {
    const messages = messagesOf(sorterEvents(1000, { jam: 0.03 }, 8), 2);
    const reference = new MemorySink();
    await runnerFor(new MemorySource(batchesOf(messages, 100), [P0, P1]), reference).runner.run();

    const source = new MemorySource(batchesOf(messages, 100), [P0, P1]);
    const sink = new MemorySink();
    let release: () => void = () => undefined;
    const reports: BatchReport[] = [];
    const { runner } = runnerFor(source, sink, { onBatch: (report) => reports.push(report) });
    // The first checkpoint waits until released: meanwhile the runner reads on and groups what it processes.
    sink.holdCheckpoint = new Promise((resolve) => (release = resolve));
    const running = runner.run();
    await waitFor(() => source.index === 1 + MAX_GROUP_BATCHES, { what: 'a full group behind the held checkpoint', timeoutMs: 5000, intervalMs: 1 });
    // A full group waits for the checkpoint before anything else is read; nothing of it was sent yet.
    await new Promise((resolve) => setImmediate(resolve));
    expect([source.index, sink.sent.length, reports.length]).toEqual([1 + MAX_GROUP_BATCHES, 1, 0]);
    sink.holdCheckpoint = undefined;
    release();
    const outcome = await running;

    // The same outputs in the same order as checkpointing batch by batch; fewer, larger checkpoints.
    expect(sink.sent.flat()).toEqual(reference.sent.flat());
    expect(sink.sent[1]).toHaveLength(reference.sent.slice(1, 1 + MAX_GROUP_BATCHES).flat().length);
    expect(sink.checkpoints.length).toBeLessThan(reference.checkpoints.length);
    expect(sink.checkpoints[1]).toEqual(reference.checkpoints[MAX_GROUP_BATCHES]);
    expect(sink.checkpoints.at(-1)).toEqual(reference.checkpoints.at(-1));
    // Every batch is still reported, in order, once its group is checkpointed.
    expect(reports.map((report) => report.positions)).toEqual(reference.checkpoints.map((checkpoint) => checkpoint.positions));
    expect(outcome.counters.records).toBe(1000);
    expect(outcome.counters.checkpoints).toBe(sink.checkpoints.length);
  });

  it('surfaces a failed checkpoint even while later batches wait in a group, and sends none of them', async () => {
    const messages = messagesOf(sorterEvents(300, {}, 9));
    const source = new MemorySource(batchesOf(messages, 100), [P0]);
    const sink = new MemorySink();
    let release: () => void = () => undefined;
    sink.holdCheckpoint = new Promise((resolve) => (release = resolve));
    const { runner } = runnerFor(source, sink);
    const running = runner.run().catch((caught: unknown) => caught);
    await waitFor(() => source.index >= 2, { what: 'a second batch behind the held checkpoint', timeoutMs: 5000, intervalMs: 1 });
    sink.failCheckpoint = true;
    release();
    const error = await running;
    expect(error).toMatchObject({ code: 'pipeline.checkpoint-failed', retriable: true });
    expect(sink.sent).toHaveLength(1);
    expect(sink.aborted).toBe(1);
    expect(runner.counters.records).toBe(0);
  });
});

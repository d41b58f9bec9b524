/**
 * One connected stretch of the worker's life: topics checked, Kafka clients connected, a fresh
 * balance controller (its counts restored per partition from the state topic as partitions arrive),
 * the shared runner looping until the stop signal. A retriable failure ends the session; the worker
 * then opens a new one, which resumes from the last checkpoint with the counts saved there.
 */
import { activeBackendName } from '../../../model/vae/backend.js';
import type { PayloadDecoder } from '../../avro/payload-decoder.js';
import type { Framing } from '../../avro/framing.js';
import { consumerLag } from '../../kafka/admin.js';
import type { Logger } from '../../ops/logger.js';
import type { Heartbeat, ReadinessGate } from '../../ops/probes.js';
import type { WorkerMetrics } from '../../ops/worker-metrics.js';
import type { PipelineCounters } from '../../pipeline/accounting.js';
import { assemblePipeline, type AssembledPipeline } from '../../pipeline/assemble.js';
import type { ClassShare } from '../../pipeline/balance.js';
import type { ModelSynthesizer } from '../../pipeline/model-synthesizer.js';
import type { Clock } from '../../pipeline/rate-limit.js';
import { PipelineRunner, type BatchReport } from '../../pipeline/runner.js';
import { describePartition, type TopicPartition } from '../../pipeline/topic-partition.js';
import { closeKafkaEndpoints, openKafkaEndpoints, prepareTopics, type KafkaEndpoints, type RunConfig } from './kafka-endpoints.js';
import type { DriftMonitor } from '../../pipeline/drift-monitor.js';
import { followModelForDrift, observeForDrift, publishDrift } from './drift-hook.js';
import { LagPoller } from './lag-poller.js';
import { ObservedSource } from './observed-source.js';
import type { SwappableSynthesizer } from './swappable-synthesizer.js';

/** Readiness conditions of the worker. */
export type WorkerCondition = 'model-loaded' | 'partitions-assigned';

/** What lives across sessions: the model, the codecs, the totals and the ops surface. */
export interface SessionContext {
  readonly config: RunConfig;
  readonly instanceId: string;
  readonly decoder: PayloadDecoder;
  readonly outputFraming: Framing;
  /** Originals passed through keep their bytes (see pipeline/original-bytes.ts). */
  readonly originalsAsRead: boolean;
  readonly synthesizer: SwappableSynthesizer<ModelSynthesizer>;
  /** Scores a sample of the records under the model in use (see drift-hook.ts). */
  readonly drift: DriftMonitor;
  readonly counters: PipelineCounters;
  readonly metrics: WorkerMetrics;
  readonly heartbeat: Heartbeat;
  readonly readiness: ReadinessGate<WorkerCondition>;
  readonly log: Logger;
  /** Milliseconds, monotonic: the rate cap's clock. */
  readonly clock: Clock;
  /** Waits between rate-cap chunks. */
  readonly sleep: (ms: number) => Promise<void>;
  readonly lagPollMs: number;
  /** Bound on closing the Kafka clients. */
  readonly closeMs: number;
}

export interface SessionResult {
  /** The balance's view of the owned partitions when the session ended. */
  readonly shares: readonly ClassShare[];
}

/** Longest single wait between heartbeats while the rate cap holds records back. */
const WAIT_SLICE_MS = 1_000;

export class WorkerSession {
  private batches = 0;
  private rateWaitMsSeen: number;

  private constructor(
    private readonly context: SessionContext,
    private readonly endpoints: KafkaEndpoints,
    private readonly pipeline: AssembledPipeline,
    private readonly runner: PipelineRunner,
    private readonly lag: LagPoller,
  ) {
    this.rateWaitMsSeen = context.counters.rateWaitMs;
  }

  /** Checks the topics and connects; `signal` ends `run` after the batch in hand. */
  static async open(context: SessionContext, signal: AbortSignal): Promise<WorkerSession> {
    const { config, log } = context;
    await prepareTopics(config, log);
    const pipeline = assemblePipeline({
      label: config.label,
      balance: config.balance,
      includeOriginals: config.sink.includeOriginals,
      originalsAsRead: context.originalsAsRead,
      decoder: context.decoder,
      outputFraming: context.outputFraming,
      synthesizer: context.synthesizer,
      ...(config.rateCap === undefined ? {} : { rateCap: config.rateCap }),
      clock: context.clock,
      onDecoded: (entries) => observeForDrift(context.drift, entries, context.metrics, context.log),
    });
    let observed: ObservedSource | undefined;
    const hooks = {
      turn: () => WorkerSession.turn(context),
      assigned: (partitions: readonly TopicPartition[]) => WorkerSession.assigned(context, pipeline, partitions),
    };
    const endpoints = await openKafkaEndpoints(config, {
      instanceId: context.instanceId,
      log,
      beforeSink: (source) => {
        observed = new ObservedSource(source, hooks);
      },
    });
    log.info('connected', {
      group: config.source.group,
      guarantee: config.delivery.guarantee,
      stateTopic: endpoints.sink.stateTopic,
      instanceId: context.instanceId,
    });
    const lag = new LagPoller({
      owned: () => endpoints.source.assignment(),
      measure: (partitions) => consumerLag(endpoints.source.consumer, partitions),
      metrics: context.metrics,
      log,
      intervalMs: context.lagPollMs,
    });
    let session: WorkerSession | undefined;
    const runner = new PipelineRunner({
      source: observed!,
      sink: endpoints.sink,
      core: pipeline.core,
      balance: pipeline.balance,
      batchSize: config.delivery.batchSize,
      ...(pipeline.rateWait === undefined ? {} : { rateWait: pipeline.rateWait }),
      sleep: (ms) => beatingSleep(ms, context),
      signal,
      counters: context.counters,
      onBatch: (report) => session?.batchDone(report),
    });
    session = new WorkerSession(context, endpoints, pipeline, runner, lag);
    return session;
  }

  /** Runs batches until the signal; rejects with the error that ended the session otherwise. */
  async run(): Promise<SessionResult> {
    this.lag.start();
    try {
      await this.runner.run();
    } finally {
      await this.lag.stop();
    }
    return { shares: this.pipeline.balance.shares() };
  }

  /** Closes the Kafka clients in the documented order; the ops surface stays. */
  async close(): Promise<void> {
    this.context.readiness.set('partitions-assigned', false);
    await this.lag.stop();
    await closeKafkaEndpoints(this.endpoints, this.context.closeMs);
  }

  /** Batches checkpointed in this session. */
  get checkpointedBatches(): number {
    return this.batches;
  }

  private batchDone(report: BatchReport): void {
    const { metrics, counters, log } = this.context;
    this.batches += 1;
    metrics.recordBatch(report.accounting);
    metrics.setClassShares(this.pipeline.balance.shares());
    publishDrift(this.context.drift, metrics);
    const waited = counters.rateWaitMs - this.rateWaitMsSeen;
    if (waited > 0) metrics.addRateCapWait(waited / 1000);
    this.rateWaitMsSeen = counters.rateWaitMs;
    if (log.enabled('debug')) {
      log.debug('batch checkpointed', {
        records: report.accounting.records,
        outputs: report.outputs,
        modelMs: report.accounting.modelMs,
        positions: report.positions.map((position) => `${describePartition(position)}@${position.nextOffset}`),
      });
    }
  }

  /** A turn of the loop: alive, and the place where a verified new model takes over. */
  private static turn(context: SessionContext): void {
    context.heartbeat.beat();
    const swap = context.synthesizer.swapIfOffered();
    if (swap === undefined) return;
    context.metrics.setModel(swap.to, activeBackendName());
    context.log.info(`model ${swap.to} now makes the synthetic records (was ${swap.from})`, { modelId: swap.to, previousModelId: swap.from });
    followModelForDrift(context.drift, context.synthesizer.current.model, context.metrics, context.log);
  }

  /** Logs the restored counts, so a restart that lost them shows at once. */
  private static assigned(context: SessionContext, pipeline: AssembledPipeline, partitions: readonly TopicPartition[]): void {
    context.readiness.set('partitions-assigned', true);
    const restored = pipeline.balance.snapshot(partitions).map((state) => ({ partition: describePartition(state), originals: state.originals, synthetic: state.synthetic }));
    context.log.info('partitions assigned; balance counts restored from the state topic', { partitions: partitions.map(describePartition), restored });
  }
}

/** The rate cap's wait, in slices with a heartbeat each, so a long wait does not read as a stalled loop. */
async function beatingSleep(ms: number, context: SessionContext): Promise<void> {
  let left = ms;
  while (left > 0) {
    const slice = Math.min(left, WAIT_SLICE_MS);
    await context.sleep(slice);
    context.heartbeat.beat();
    left -= slice;
  }
}

/**
 * `raretide run` end to end, in-process: load the config and the model (checked against the reader
 * schema), serve metrics and probes, then run sessions of the shared pipeline on Kafka until the stop
 * signal — reconnecting with backoff after a retriable failure, failing on a fatal one — while a
 * watcher picks up a new model directory. On stop: the batch in hand is sent and checkpointed, the
 * Kafka clients close in order, then the model watcher, the model and the endpoint.
 */
import { setTimeout as delay } from 'node:timers/promises';

import { RaretideError } from '../../../config/errors.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import { activeBackendName } from '../../../model/vae/backend.js';
import type { KnownSchema } from '../../avro/known-schema.js';
import { PayloadDecoder } from '../../avro/payload-decoder.js';
import { EventLoopLag } from '../../ops/event-loop-lag.js';
import { startOpsServer, type OpsServer } from '../../ops/http-server.js';
import { createLogger, type LogFormat, type Logger } from '../../ops/logger.js';
import { Heartbeat, ReadinessGate } from '../../ops/probes.js';
import { RuntimeSampler, sampleRuntimeOnScrape } from '../../ops/runtime-sampler.js';
import { WorkerMetrics } from '../../ops/worker-metrics.js';
import { PipelineCounters } from '../../pipeline/accounting.js';
import { DriftMonitor } from '../../pipeline/drift-monitor.js';
import type { ClassShare } from '../../pipeline/balance.js';
import { ModelSynthesizer } from '../../pipeline/model-synthesizer.js';
import { originalsPassUnchanged } from '../../pipeline/original-bytes.js';
import type { Clock } from '../../pipeline/rate-limit.js';
import type { CliContext } from '../cli-context.js';
import { readerSchema } from '../replay/run-replay.js';
import type { RunConfig } from './kafka-endpoints.js';
import { followModelForDrift } from './drift-hook.js';
import { missingNodeOptions } from './node-options.js';
import { ModelWatcher, type ModelCheck } from './model-watch.js';
import { backoffMs, DEFAULT_BACKOFF, waitUnlessAborted, type BackoffSettings } from './reconnect-backoff.js';
import { SwappableSynthesizer } from './swappable-synthesizer.js';
import { topicFramings } from '../../avro/framings-from-config.js';
import { WorkerSession, type SessionContext, type WorkerCondition } from './worker-session.js';

export interface RunRequest {
  readonly configPath: string;
  /** This replica's stable identity: names its transactional id under exactly-once. */
  readonly instanceId: string;
  readonly quiet: boolean;
  /** Overrides `log.format`. */
  readonly logFormat?: LogFormat;
}

export interface WorkerTimings {
  /** Between polls of the model directory. @default 5000 */
  readonly modelPollMs: number;
  /** Between consumer-lag measurements. @default 5000 */
  readonly lagPollMs: number;
  /** Longest gap between loop turns still answered as alive on /healthz. @default 60000 */
  readonly heartbeatStaleMs: number;
  /** Waits before reconnecting after a retriable failure. @default {firstMs: 1000, longestMs: 30000} */
  readonly reconnect: BackoffSettings;
  /** Bound on closing the Kafka clients at the end of a session. @default 20000 */
  readonly closeMs: number;
}

const DEFAULT_TIMINGS: WorkerTimings = { modelPollMs: 5_000, lagPollMs: 5_000, heartbeatStaleMs: 60_000, reconnect: DEFAULT_BACKOFF, closeMs: 20_000 };

export interface RunEffects {
  readonly context: CliContext;
  /** Abort to stop: the batch in hand finishes and is checkpointed, then everything closes. */
  readonly signal: AbortSignal;
  /** Milliseconds, monotonic, for the rate cap and model timings. @default performance.now */
  readonly clock?: Clock;
  readonly timings?: Partial<WorkerTimings>;
}

export interface WorkerOutcome {
  /** Totals over every session. */
  readonly counters: PipelineCounters;
  /** The model in use at the end. */
  readonly modelId: string;
  readonly sessions: number;
  /** The balance's view of the owned partitions when the last session ended. */
  readonly shares: readonly ClassShare[];
}

export interface RunningWorker {
  /** Base URL of /metrics, /healthz and /readyz; undefined with `metrics.enabled: false`. */
  readonly opsUrl: string | undefined;
  /** Running totals, readable while the worker runs. */
  readonly counters: PipelineCounters;
  readonly metrics: WorkerMetrics;
  /** The worker's log (JSON or text lines on standard error). */
  readonly log: Logger;
  /** The model making synthetic records now. */
  modelId(): string;
  /** Polls the model directory now, outside the timer (what the timer does). */
  checkModel(): Promise<ModelCheck>;
  /** Settles once the worker stopped (signal) or failed (fatal error, or a failure while stopping). */
  readonly finished: Promise<WorkerOutcome>;
}

/** Starts the worker; resolves once the model is loaded and the endpoint is up (Kafka connects after). */
export async function startWorker(request: RunRequest, effects: RunEffects): Promise<RunningWorker> {
  const { context, signal } = effects;
  const timings = { ...DEFAULT_TIMINGS, ...effects.timings };
  const config: RunConfig = requireSections(await loadConfigFile(request.configPath, { env: context.env }), 'run', ['kafka', 'source', 'sink', 'label', 'balance', 'model']);
  const log = createLogger({ level: config.log.level, format: request.logFormat ?? config.log.format, quiet: request.quiet, sink: context.stderr });

  const metrics = new WorkerMetrics();
  const heartbeat = new Heartbeat(timings.heartbeatStaleMs);
  const readiness = new ReadinessGate<WorkerCondition>(['model-loaded', 'partitions-assigned']);
  const loopLag = new EventLoopLag();
  sampleRuntimeOnScrape(metrics, new RuntimeSampler(loopLag));
  loopLag.start();
  let ops: OpsServer | undefined;
  let synthesizer: SwappableSynthesizer<ModelSynthesizer> | undefined;
  try {
    if (config.metrics.enabled) {
      ops = await startOpsServer({
        host: config.metrics.host,
        port: config.metrics.port,
        metrics: () => metrics.registry.render(),
        liveness: () => heartbeat.status(),
        readiness: () => readiness.status(),
        log,
      });
    }
    const loaded = await ModelSynthesizer.load(config.model.dir, config.model.privacyGuard);
    synthesizer = new SwappableSynthesizer(loaded);
    const reader = await readerSchema(config.source.readerSchemaFile, loaded);
    const framings = await topicFramings(config.source.framing, config.sink.framing, reader);
    readiness.set('model-loaded', true);
    metrics.setModel(loaded.modelId, activeBackendName());
    metrics.initializeClasses(loaded.classes);
    metrics.setClassShares(Object.entries(config.balance.targets).map(([label, target]) => ({ label, share: 0, target })));
    log.info(`raretide run: ${config.source.topic} → ${config.sink.topic} (dead letters → ${config.sink.deadLetterTopic}), model ${loaded.modelId}`, {
      guarantee: config.delivery.guarantee,
      counting: config.balance.counting.mode,
      rateCap: config.rateCap ?? null,
      includeOriginals: config.sink.includeOriginals,
      backend: activeBackendName(),
    });
    const missing = missingNodeOptions(process.execArgv, context.env.NODE_OPTIONS);
    if (missing.length > 0) {
      log.info(`node runs without ${missing.join(' ')}, which sizes V8's young generation for the worker's batches (measured ~18 % more throughput with it); pass it to node or set NODE_OPTIONS=${missing.join(' ')}`);
    }
    const drift = new DriftMonitor();
    followModelForDrift(drift, loaded.model, metrics, log);

    const watcher = modelWatcher(config, synthesizer, reader, log, timings.modelPollMs);
    const sessionContext: SessionContext = {
      config,
      instanceId: request.instanceId,
      decoder: new PayloadDecoder(framings.input, { reader }),
      outputFraming: framings.output,
      originalsAsRead: originalsPassUnchanged(framings.input, framings.output, reader),
      synthesizer,
      drift,
      counters: new PipelineCounters(),
      metrics,
      heartbeat,
      readiness,
      log,
      clock: effects.clock ?? { now: () => performance.now() },
      // Rate-cap waits are not cut short by the stop signal: the batch in hand is finished first.
      sleep: (ms) => delay(ms),
      lagPollMs: timings.lagPollMs,
      closeMs: timings.closeMs,
    };
    watcher.start();
    const swappable = synthesizer;
    const server = ops;
    const finished = superviseSessions(sessionContext, signal, timings.reconnect).finally(async () => {
      await watcher.stop();
      swappable.dispose();
      await server?.close();
      loopLag.stop();
    });
    finished.then(
      (outcome) => log.info('stopped', { records: outcome.counters.records, synthetic: outcome.counters.total('synthetic'), deadLettered: outcome.counters.deadLettered(), sessions: outcome.sessions }),
      (error: unknown) => log.error('stopped by a fatal error', { error }),
    );
    return {
      opsUrl: ops?.url,
      counters: sessionContext.counters,
      metrics,
      log,
      modelId: () => swappable.modelId,
      checkModel: () => watcher.check(),
      finished,
    };
  } catch (error) {
    synthesizer?.dispose();
    await ops?.close();
    loopLag.stop();
    throw error;
  }
}

/**
 * Sessions until the signal: a retriable failure closes the session and opens a new one after a
 * backoff (reset once a session checkpointed a batch); anything else closes it and rejects.
 */
async function superviseSessions(context: SessionContext, signal: AbortSignal, backoff: BackoffSettings): Promise<WorkerOutcome> {
  const { log, counters, synthesizer } = context;
  let attempt = 0;
  let sessions = 0;
  let shares: readonly ClassShare[] = [];
  const outcome = (): WorkerOutcome => ({ counters, modelId: synthesizer.modelId, sessions, shares });
  while (!signal.aborted) {
    let session: WorkerSession | undefined;
    try {
      session = await WorkerSession.open(context, signal);
      sessions += 1;
      const result = await session.run();
      shares = result.shares;
      await session.close();
      return outcome();
    } catch (caught) {
      const error = asRaretideError(caught);
      if (session !== undefined && session.checkpointedBatches > 0) attempt = 0;
      await session?.close().catch((closeError: unknown) => log.warn('closing the Kafka clients after a failure did not finish cleanly', { error: closeError }));
      if (!retriable(error) || signal.aborted) throw error;
      const wait = backoffMs(attempt, backoff);
      attempt += 1;
      log.warn(`${error.message}; reconnecting in ${wait} ms (attempt ${attempt})`, { error });
      context.heartbeat.beat();
      await waitUnlessAborted(wait, signal);
    }
  }
  return outcome();
}

/**
 * Retriable, and not caused by something that is not: a failed checkpoint is retriable as such, but
 * not when the producer was fenced or hit a fatal error underneath — reconnecting would only fence the
 * other replica in turn, or fail the same way again.
 */
function retriable(error: RaretideError): boolean {
  for (let cause: unknown = error; cause !== undefined; cause = (cause as Error).cause) {
    if (cause instanceof RaretideError && !cause.retriable) return false;
    if (!(cause instanceof Error)) break;
  }
  return true;
}

/** Errors from outside raretide (a bug, a library's own error) are fatal: they are not known to pass. */
function asRaretideError(error: unknown): RaretideError {
  if (error instanceof RaretideError) return error;
  return new RaretideError('internal', `unexpected failure: ${error instanceof Error ? error.message : String(error)}`, { retriable: false, cause: error });
}

/** Watches `model.dir`; a new model must know the same classes and read the same schema to be offered. */
function modelWatcher(config: RunConfig, synthesizer: SwappableSynthesizer<ModelSynthesizer>, reader: KnownSchema, log: Logger, intervalMs: number): ModelWatcher<ModelSynthesizer> {
  const classes = [...synthesizer.classes].sort();
  return new ModelWatcher<ModelSynthesizer>({
    directory: config.model.dir,
    initialId: synthesizer.modelId,
    intervalMs,
    load: (directory) => ModelSynthesizer.load(directory, config.model.privacyGuard),
    accept: (candidate) => {
      const offered = [...candidate.classes].sort();
      if (offered.join('\n') !== classes.join('\n')) {
        throw new RaretideError('model.classes-changed', `it knows classes ${offered.join(', ')}, the running worker ${classes.join(', ')}; restart the worker to change classes`);
      }
      candidate.model.checkSchema(reader.fingerprint.hex, reader.source);
    },
    discard: (candidate) => candidate.dispose(),
    offer: (candidate) => synthesizer.offer(candidate),
    log,
  });
}

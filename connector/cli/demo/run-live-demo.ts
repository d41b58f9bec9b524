/**
 * `raretide demo --kafka`: the live worker on a broker — the cluster KAFKA_BROKERS names, else a local
 * one the demo starts. Fits the model on generated history as the file demo does, creates the topics,
 * starts the worker as `raretide run` does (in-process) and a producer of the scenario's readings at a
 * steady rate, and shows live counts until Ctrl-C, SIGTERM or `--duration`. Then it stops in order:
 * the producer (its last readings delivered), the worker once it has consumed them (batch finished,
 * offsets committed), and the broker it started (JVM stopped, data removed).
 */
import { setTimeout as delay } from 'node:timers/promises';

import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import { KafkaAdmin } from '../../kafka/admin.js';
import { createLogger } from '../../ops/logger.js';
import { installGracefulShutdown, type ShutdownProcess } from '../../ops/shutdown.js';
import type { PipelineCounters } from '../../pipeline/accounting.js';
import { startWorker, type RunningWorker } from '../run/run-worker.js';
import { demoBroker, type DemoBroker } from './demo-broker.js';
import type { DemoTopics } from './demo-config.js';
import { demoPaths, prepareDemoDirectory, type DemoPaths } from './demo-directory.js';
import { count, DemoOutput } from './demo-output.js';
import { fitStep, generateStep, type StepContext } from './demo-steps.js';
import { classTotals, LiveDisplay, liveLine } from './live-counts.js';
import type { DemoEffects } from './run-file-demo.js';
import { ScenarioProducer } from './scenario-producer.js';
import { whatNext } from './what-next.js';

export interface LiveDemoRequest {
  readonly dir: string;
  /** Readings of history to fit on (a quarter is held out, as in the file demo). */
  readonly records: number;
  readonly seed: number;
  readonly epochs: number;
  readonly topics: DemoTopics;
  /** Readings produced a second. */
  readonly perSecond: number;
  /** Stop after this many seconds of live running; undefined: at Ctrl-C or SIGTERM. */
  readonly durationSeconds: number | undefined;
  readonly quiet: boolean;
}

export interface LiveDemoEffects extends DemoEffects {
  /** Wall clock, ms since the epoch: paces and stamps the produced readings. */
  readonly wallClock: () => number;
  /** Where SIGINT and SIGTERM come from. @default process */
  readonly process?: ShutdownProcess;
}

export interface LiveDemoResult {
  readonly paths: DemoPaths;
  readonly brokers: string;
  /** Readings produced, per class. */
  readonly produced: Readonly<Record<string, number>>;
  readonly counters: PipelineCounters;
  readonly modelId: string;
  /** What ended the live run. */
  readonly stoppedBy: string;
}

/** A stop asked for before the live run began; the command reports it and exits 0. */
export class LiveDemoInterrupted extends Error {}

/** Partitions of the source and output topics the demo creates. */
const PARTITIONS = 3;
/** Between live lines. */
const LIVE_LINE_MS = 2_000;
/** Longest wait, after the producer stopped, for the worker to consume what was produced. */
const DRAIN_MS = 20_000;
/** Longest the whole stop may take before the process exits 1 (the broker's watchdog still stops its JVM). */
const STOP_DEADLINE_MS = 90_000;

export async function runLiveDemo(request: LiveDemoRequest, effects: LiveDemoEffects): Promise<LiveDemoResult> {
  const { context, now } = effects;
  const paths = demoPaths(request.dir);
  const out = new DemoOutput(context.stdout, request.quiet, now, 4);
  const steps: StepContext = { out, context, quiet: request.quiet, paths };
  // Log lines (the worker's, the broker's, the stop's) erase the live line before they are written.
  const display = new LiveDisplay(context.stderr, context.stderrColumns, request.quiet);
  const log = createLogger({ format: 'text', quiet: request.quiet, sink: display.passThrough });
  out.line(`raretide demo --kafka: INVENTED pump-station telemetry (not real data), files in ${paths.dir}/ (delete it when done)`);
  await prepareDemoDirectory(paths);

  // Ctrl-C before the live step ends training early and skips the live run; during it, stops it cleanly.
  const interrupted = new AbortController();
  let stopped: () => void = () => undefined;
  const teardownDone = new Promise<void>((resolve) => (stopped = resolve));
  const shutdown = installGracefulShutdown({
    stop: async (reason) => {
      interrupted.abort(reason);
      await teardownDone;
    },
    deadlineMs: STOP_DEADLINE_MS,
    log,
    ...(effects.process === undefined ? {} : { process: effects.process }),
  });
  let broker: DemoBroker | undefined;
  try {
    out.begin(1, 'broker', 'KAFKA_BROKERS if set, else a local Apache Kafka broker (first use fetches its jars with Maven)');
    broker = await demoBroker({ env: context.env, log: (line) => log.info(line) });
    out.done(broker.description);

    await generateStep(2, steps, request.records, request.seed, { brokers: broker.brokers, topics: request.topics, epochs: request.epochs, metricsPort: 0 });
    const model = await fitStep(3, steps, request.epochs, interrupted.signal);
    if (interrupted.signal.aborted) throw new LiveDemoInterrupted(String(interrupted.signal.reason));

    out.begin(4, 'live', `the worker on ${request.topics.source} → ${request.topics.output}, fed ${count(request.perSecond)} readings a second`);
    const live = await runLive(request, effects, { paths, out, display }, interrupted.signal, (reason) => shutdown.request(reason));
    out.done(`produced ${count(live.producedTotal)} readings; the worker consumed ${count(live.counters.records)} and wrote ${count(live.counters.total('originalsEmitted'))} originals + ${count(live.counters.total('synthetic'))} synthetic to ${request.topics.output} (stopped by ${live.stoppedBy})`, [
      `  ${classTotals(live.counters.byClass)}`,
      `  ${live.finalLine}`,
      `config ${paths.config}`,
    ]);
    out.line();
    for (const line of whatNext({ paths, kafka: { brokers: broker.brokers, startedByDemo: broker.startedByDemo } })) out.line(line);
    return { paths, brokers: broker.brokers, produced: live.produced, counters: live.counters, modelId: model.id, stoppedBy: live.stoppedBy };
  } catch (error) {
    if (!(error instanceof LiveDemoInterrupted)) throw error;
    out.line(`stopping (${error.message}) before the live run; what the demo started stops before it exits.`);
    throw error;
  } finally {
    await broker?.stop();
    stopped();
    shutdown.dispose();
  }
}

interface LiveOutcome {
  readonly produced: Readonly<Record<string, number>>;
  readonly producedTotal: number;
  readonly counters: PipelineCounters;
  readonly finalLine: string;
  readonly stoppedBy: string;
}

async function runLive(
  request: LiveDemoRequest,
  effects: LiveDemoEffects,
  { paths, out, display }: { readonly paths: DemoPaths; readonly out: DemoOutput; readonly display: LiveDisplay },
  interrupted: AbortSignal,
  requestStop: (reason: string) => void,
): Promise<LiveOutcome> {
  const { context, now } = effects;
  const config = requireSections(await loadConfigFile(paths.config, { env: context.env }), 'demo --kafka', ['kafka', 'source', 'sink', 'balance']);
  const admin = await KafkaAdmin.connect(config.kafka);
  try {
    await admin.ensureTopics([
      { topic: config.source.topic, partitions: PARTITIONS },
      { topic: config.sink.topic, partitions: PARTITIONS },
      { topic: config.sink.deadLetterTopic, partitions: 1 },
    ]);
  } finally {
    await admin.close();
  }

  const stopWorker = new AbortController();
  const worker = await startWorker({ configPath: paths.config, instanceId: 'demo', quiet: request.quiet, logFormat: 'text' }, { context: { ...context, stderr: display.passThrough }, signal: stopWorker.signal });
  let producer: ScenarioProducer | undefined;
  const started = now();
  const figures = () => ({ elapsedMs: now() - started, produced: producer?.total ?? 0, consumed: worker.counters.records, byClass: worker.counters.byClass, targets: config.balance.targets });
  const ticker = setInterval(() => display.show(liveLine(figures())), LIVE_LINE_MS);
  let stoppedBy = 'a stop before the live run began';
  let failure: unknown;
  try {
    out.detail(`metrics ${worker.opsUrl === undefined ? 'disabled' : `${worker.opsUrl}/metrics`} · ${request.durationSeconds === undefined ? 'Ctrl-C stops' : `stops after ${request.durationSeconds} s, or at Ctrl-C`}`);
    // Later readings than the history's, from another stream of the same scenario.
    producer = await ScenarioProducer.start({ kafka: config.kafka, topic: config.source.topic, perSecond: request.perSecond, seed: request.seed + 1, firstReadingId: request.records + 1, now: effects.wallClock });
    stoppedBy = await untilStop(worker, interrupted, request.durationSeconds, requestStop);
  } catch (error) {
    failure = error;
  }
  clearInterval(ticker);
  // In order: no more readings; the worker consumes what was produced; its last batch is committed.
  try {
    await producer?.stop();
    if (failure === undefined && producer !== undefined) await drained(worker, producer.total, now);
  } catch (error) {
    failure ??= error;
  }
  stopWorker.abort();
  const outcome = await worker.finished.catch((error: unknown) => {
    failure ??= error;
    return undefined;
  });
  const finalLine = liveLine(figures());
  display.finish();
  if (failure !== undefined) throw failure;
  return { produced: { ...producer!.produced }, producedTotal: producer!.total, counters: outcome?.counters ?? worker.counters, finalLine, stoppedBy };
}

/** Resolves with what asked for the stop: the duration, a signal; rejects when the worker failed. */
async function untilStop(worker: RunningWorker, interrupted: AbortSignal, durationSeconds: number | undefined, requestStop: (reason: string) => void): Promise<string> {
  const timer = durationSeconds === undefined ? undefined : setTimeout(() => requestStop(`--duration ${durationSeconds} s`), durationSeconds * 1000);
  try {
    const stopAsked = new Promise<string>((resolve) => {
      if (interrupted.aborted) resolve(String(interrupted.reason));
      interrupted.addEventListener('abort', () => resolve(String(interrupted.reason)), { once: true });
    });
    const workerEnded = worker.finished.then(() => {
      throw new Error('the worker stopped on its own before the demo asked it to');
    });
    return await Promise.race([stopAsked, workerEnded]);
  } finally {
    if (timer !== undefined) clearTimeout(timer);
  }
}

/** Waits, boundedly (a second Ctrl-C exits at once), for the worker to have consumed every produced reading. */
async function drained(worker: RunningWorker, produced: number, now: () => number): Promise<void> {
  const deadline = now() + DRAIN_MS;
  while (worker.counters.records < produced && now() < deadline) await delay(100);
  const left = produced - worker.counters.records;
  if (left > 0) worker.log.warn(`stopping with ${left} readings not yet consumed; the worker takes them up at its next start`);
}


/**
 * The `raretide run` integration tests' scenario, on the invented parcel-sorter events
 * (test/unit/pipeline/support/sorter-events.ts): a tiny model fitted in a second or two, sorter events
 * written raw-framed to a topic at known partitions and offsets, a config file, the worker run
 * in-process with its log captured, and readers for the output topics.
 */
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

import type { Message } from 'node-rdkafka';

import type { FramingConfig, RaretideConfigInput } from '../../config/schema.js';
import type { CliContext } from '../../connector/cli/cli-context.js';
import { startWorker, type RunningWorker, type WorkerTimings } from '../../connector/cli/run/run-worker.js';
import { fromHeaders, type ProvenanceTag } from '../../connector/pipeline/provenance.js';
import { fitModel } from '../../model/fit.js';
import { saveModel } from '../../model/vae/index.js';
import { SORTER_EVENT_SCHEMA, sorterEvents, sorterSchema, type SorterEvent } from '../unit/pipeline/support/sorter-events.js';
import { readWholeTopic } from './adapter-loop.js';
import { connectProducer, flushAndDisconnect } from './kafka-clients.js';
import { produceWithBackpressure } from './produce-with-backpressure.js';

export { sorterEvents, sorterSchema, type SorterEvent };

export async function makeWorkspace(prefix: string): Promise<{ dir: string; remove: () => Promise<void> }> {
  const dir = await mkdtemp(join(tmpdir(), `raretide-${prefix}-`));
  return { dir, remove: () => rm(dir, { recursive: true, force: true }) };
}

/** Writes the sorter schema as an `.avsc` file for raw framing; returns its path. */
export async function writeSorterSchema(dir: string): Promise<string> {
  const path = join(dir, 'sorter-event.avsc');
  await writeFile(path, JSON.stringify(SORTER_EVENT_SCHEMA));
  return path;
}

/** Layer sizes and epochs of a test model. */
export interface SorterModelSize {
  readonly hidden: number[];
  readonly latent: number;
  readonly epochs: number;
}

/** Deliberately small (fast to fit): what the tests use unless they need another. */
export const SMALL_SORTER_MODEL: SorterModelSize = { hidden: [16], latent: 2, epochs: 4 };

/**
 * Fits a model of `size` (small by default) on events with the rare classes at 5 % each, and saves it
 * to `dir` (replacing a model there); returns the model id.
 */
export async function fitSorterModel(dir: string, trainingSeed = 3, size: SorterModelSize = SMALL_SORTER_MODEL): Promise<string> {
  const events = sorterEvents(3000, { jam: 0.05, misroute: 0.05 }, 100 + trainingSeed);
  const fitted = await fitModel({
    schema: SORTER_EVENT_SCHEMA,
    records: events as never,
    labelPath: 'outcome',
    training: { ...size, batchSize: 256, seed: trainingSeed },
  });
  try {
    return await saveModel(dir, fitted.bundle, { overwrite: true });
  } finally {
    fitted.dispose();
  }
}

/** A source message as written: where it went and its bytes. */
export interface WrittenEvent {
  readonly partition: number;
  readonly offset: bigint;
  readonly value: Buffer;
  /** The event, or undefined for a malformed payload. */
  readonly event: SorterEvent | undefined;
}

/**
 * Writes payloads round-robin over `partitions` of a fresh topic (explicit partitions, idempotent
 * producer), so payload i of `firstIndex + i` sits at partition `(firstIndex + i) % partitions`, offset
 * `⌊(firstIndex + i) / partitions⌋`. `undefined` entries in `events` become malformed payloads.
 */
export async function writeEvents(
  brokers: string,
  topic: string,
  events: readonly (SorterEvent | undefined)[],
  partitions: number,
  firstIndex = 0,
  frame: (event: SorterEvent) => Buffer = (event) => sorterSchema.type.toBuffer(event),
): Promise<WrittenEvent[]> {
  const producer = await connectProducer({ 'metadata.broker.list': brokers, 'enable.idempotence': true });
  const written: WrittenEvent[] = [];
  try {
    for (const [index, event] of events.entries()) {
      const position = firstIndex + index;
      // 0xFF… is no valid start of a sorter event: its first field is a string length (a zigzag varint).
      const value = event === undefined ? Buffer.from([0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0x01]) : frame(event);
      const partition = position % partitions;
      await produceWithBackpressure(producer, { topic, partition, value, key: event?.parcelId ?? `bad-${position}`, timestamp: Date.now() });
      written.push({ partition, offset: BigInt(Math.floor(position / partitions)), value, event });
    }
  } finally {
    await flushAndDisconnect(producer);
  }
  return written;
}

export interface ScenarioTopics {
  readonly source: string;
  readonly output: string;
  readonly deadLetter: string;
  readonly group: string;
}

export interface ConfigOptions {
  readonly brokers: string;
  readonly topics: ScenarioTopics;
  readonly schemaFile: string;
  readonly modelDir: string;
  readonly targets: Readonly<Record<string, number>>;
  readonly guarantee?: 'at-least-once' | 'exactly-once';
  readonly includeOriginals?: boolean;
  readonly batchSize?: number;
  readonly rateCap?: { perSecond: number; burst: number; whenExceeded: 'wait' | 'thin' };
  readonly seed?: number;
  /** @default raw with `schemaFile` */
  readonly sourceFraming?: FramingConfig;
  /** @default the source's */
  readonly sinkFraming?: FramingConfig;
  /** `model.privacyGuard.scope`; `off` makes every planned variant an output. @default the config's */
  readonly privacyGuardScope?: 'off' | 'source' | 'class';
}

/** Writes a JSON config for `raretide run`; returns its path. */
export async function writeRunConfig(dir: string, name: string, options: ConfigOptions): Promise<string> {
  const config: RaretideConfigInput = {
    // A 6 s session (the broker's smallest by default) so a killed member leaves the group quickly.
    kafka: { brokers: options.brokers, settings: { 'session.timeout.ms': 6000, 'heartbeat.interval.ms': 500 } },
    source: { topic: options.topics.source, group: options.topics.group, framing: options.sourceFraming ?? { kind: 'raw', schemaFile: options.schemaFile } },
    sink: {
      topic: options.topics.output,
      deadLetterTopic: options.topics.deadLetter,
      includeOriginals: options.includeOriginals ?? false,
      ...(options.sinkFraming === undefined ? {} : { framing: options.sinkFraming }),
    },
    label: { from: 'field', path: 'outcome' },
    balance: { targets: { ...options.targets }, maxPerRecord: 5, seed: options.seed ?? 11 },
    delivery: { guarantee: options.guarantee ?? 'at-least-once', batchSize: options.batchSize ?? 500 },
    model: { dir: options.modelDir, ...(options.privacyGuardScope === undefined ? {} : { privacyGuard: { scope: options.privacyGuardScope } }) },
    metrics: { port: 0 },
    ...(options.rateCap === undefined ? {} : { rateCap: options.rateCap }),
  };
  const path = join(dir, `${name}.json`);
  await writeFile(path, JSON.stringify(config, null, 2));
  return path;
}

/** A worker run in-process, with its log lines parsed. */
export interface InProcessWorker {
  readonly worker: RunningWorker;
  /** Every JSON log line so far. */
  readonly logLines: Record<string, unknown>[];
  /** Stops it (as SIGTERM would) and waits for it. */
  stop(): Promise<Awaited<RunningWorker['finished']>>;
}

export async function startInProcess(configPath: string, instanceId: string, timings: Partial<WorkerTimings> = {}): Promise<InProcessWorker> {
  const logLines: Record<string, unknown>[] = [];
  const context: CliContext = {
    env: {},
    stdout: () => undefined,
    stderr: (text) => {
      for (const line of text.split('\n')) if (line.trim() !== '') logLines.push(JSON.parse(line) as Record<string, unknown>);
    },
  };
  const stop = new AbortController();
  const worker = await startWorker({ configPath, instanceId, quiet: false }, { context, signal: stop.signal, timings: { lagPollMs: 200, ...timings } });
  return {
    worker,
    logLines,
    stop: () => {
      stop.abort();
      return worker.finished;
    },
  };
}

/** An output message with its provenance read. */
export interface TaggedMessage {
  readonly message: Message;
  readonly tag: ProvenanceTag;
}

/** Every message of `topic` (read_committed by default) with its provenance; throws on a bad tag. */
export async function readTagged(brokers: string, topic: string, partitions: number, isolation: 'read_committed' | 'read_uncommitted' = 'read_committed'): Promise<TaggedMessage[]> {
  const messages = await readWholeTopic(brokers, topic, partitions, isolation);
  return messages.map((message) => {
    const tag = fromHeaders(message.headers?.map((header) => header as Record<string, Buffer>) ?? []);
    if (!tag.ok) throw new Error(`output ${message.topic}:${message.partition}@${message.offset} has bad provenance: ${tag.problem.reason}`);
    return { message, tag: tag.value };
  });
}

/** `topic:partition:offset:sample` of a synthetic tag: what must be unique in the output. */
export function variantKey(tag: ProvenanceTag): string {
  const { topic, partition, offset } = tag.source;
  return tag.kind === 'synthetic' ? `${topic}:${partition}:${offset}:${tag.sampleIndex}` : `${topic}:${partition}:${offset}:original`;
}

/** Sample values of one metric family from Prometheus text, keyed by the label set text. */
export function metricSamples(text: string, name: string): Map<string, number> {
  const samples = new Map<string, number>();
  for (const line of text.split('\n')) {
    const match = /^([a-zA-Z_:][a-zA-Z0-9_:]*)(\{[^}]*\})? (\S+)$/.exec(line);
    if (match === null || match[1] !== name) continue;
    samples.set(match[2] ?? '', Number(match[3]));
  }
  return samples;
}

export function sumOf(values: Iterable<number>): number {
  let total = 0;
  for (const value of values) total += value;
  return total;
}

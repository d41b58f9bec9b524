/**
 * What a replay reads from and writes to: an Avro container file, or a topic — `source.topic` as it
 * stood at start (from the earliest offset, an offset or a time; see partition-ordered-source.ts for the
 * order records are read in) and `sink.topic`. Each kind opens a `BatchSource` or `BatchSink`; the rest
 * of the replay does not change.
 */
import { RaretideError, UsageError } from '../../../config/errors.js';
import { requireSections } from '../../../config/requirements.js';
import type { RaretideConfig } from '../../../config/schema.js';
import { inputFraming, topicFramings } from '../../avro/framings-from-config.js';
import { KafkaAdmin } from '../../kafka/admin.js';
import type { SnapshotStart } from '../../kafka/snapshot-source.js';
import type { ContainerCodec } from '../../avro/container/container-format.js';
import type { Framing } from '../../avro/framing.js';
import type { KnownSchema } from '../../avro/known-schema.js';
import { RawFraming } from '../../avro/raw-framing.js';
import { ReaderResolution } from '../../avro/resolution.js';
import { ContainerFileSink, type FileProvenance } from '../../files/container-sink.js';
import { ContainerFileSource } from '../../files/container-source.js';
import { syncMarkerFor } from '../../files/sync-marker.js';
import type { BatchSink, BatchSource } from '../../pipeline/source-sink.js';
import { PartitionOrderedSource } from './partition-ordered-source.js';
import { ReplayTopicSink } from './replay-topic-sink.js';

export type ReplayInput = { readonly kind: 'file'; readonly path: string } | { readonly kind: 'topic'; readonly start: SnapshotStart };
/** `summary`: where a topic output's summary JSON goes; absent: printed only. */
export type ReplayOutput = { readonly kind: 'file'; readonly path: string } | { readonly kind: 'topic'; readonly summary?: string };

export interface OpenedInput {
  readonly source: BatchSource;
  /** How its payloads are framed, for the core's decoder. */
  readonly framing: Framing;
  /** Names the input in messages and the summary. */
  readonly name: string;
  /** Share of the input read so far (0…1), for progress and ETA. */
  progress(): number;
  /** Records arrive without keys or headers, so only a field can carry the label. */
  readonly labelFromFieldOnly: boolean;
  /** Block compression of an input file, reused for the output file. */
  readonly fileCodec: ContainerCodec | undefined;
}

export interface OpenedOutput {
  readonly sink: BatchSink;
  /** The framing the core must encode outputs with. */
  readonly framing: Framing;
  readonly name: string;
  /** Files written beside the output (dead letters, provenance sidecar), for the summary. */
  readonly sidecars: Readonly<Record<string, string>>;
  /** Where the summary JSON goes (absent: printed only). */
  readonly summaryPath: string | undefined;
  /** After a failure: releases the sink, removing what can be removed (a file; a topic keeps what it got). */
  discard(): Promise<void>;
}

export interface OutputSettings {
  /** The schema records are written in (the reader schema). */
  readonly recordSchema: KnownSchema;
  readonly provenance: FileProvenance;
  readonly seed: number;
  readonly modelId: string;
}

/**
 * Opens the input; `reader` is the schema records will be read as, checked against the input's writer.
 * A topic input needs the config's `kafka` and `source` sections.
 */
export async function openInput(input: ReplayInput, reader: KnownSchema, config?: RaretideConfig): Promise<OpenedInput> {
  if (input.kind === 'topic') return openTopicInput(input.start, reader, config);
  const source = await ContainerFileSource.open(input.path);
  const resolved = new ReaderResolution(reader).resolverFor(source.writer);
  if (!resolved.ok) {
    await source.close();
    throw new UsageError(`Input file ${input.path} cannot be read as the model's schema: ${resolved.problem.reason}`, { code: 'avro.schema-mismatch' });
  }
  return {
    source,
    framing: new RawFraming(source.writer),
    name: input.path,
    progress: () => (source.totalBytes === 0 ? 1 : source.bytesRead / source.totalBytes),
    labelFromFieldOnly: true,
    fileCodec: source.codec,
  };
}

async function openTopicInput(start: SnapshotStart, reader: KnownSchema, config: RaretideConfig | undefined): Promise<OpenedInput> {
  const { kafka, source: topicSource } = requireSections(needConfig(config), 'replay --from-topic', ['kafka', 'source']);
  const framing = await inputFraming(topicSource.framing, reader);
  const source = await PartitionOrderedSource.open({ kafka, topic: topicSource.topic, start });
  const expected = Number(source.expectedRecords);
  return {
    source,
    framing,
    name: `topic ${topicSource.topic}`,
    progress: () => (expected === 0 ? 1 : source.recordsRead / expected),
    labelFromFieldOnly: false,
    fileCodec: undefined,
  };
}

/** Opens the output; a topic output needs the config's `kafka` and `sink` sections. */
export async function openOutput(
  output: ReplayOutput,
  input: ReplayInput,
  settings: OutputSettings,
  codec: ContainerCodec = 'null',
  config?: RaretideConfig,
): Promise<OpenedOutput> {
  if (output.kind === 'topic') return openTopicOutput(output, input, settings.recordSchema, config);
  if (input.kind === 'file' && output.path === input.path) {
    throw new UsageError(`--out ${output.path} is the input file; write the replay to another path.`);
  }
  const sink = await ContainerFileSink.create(output.path, {
    recordSchema: settings.recordSchema,
    provenance: settings.provenance,
    syncMarker: syncMarkerFor(settings.seed),
    codec,
    metadata: { 'raretide.model': settings.modelId, 'raretide.seed': String(settings.seed) },
  });
  const sidecars: Record<string, string> = { deadLetters: sink.paths.deadLetters };
  if (sink.paths.provenance !== undefined) sidecars.provenance = sink.paths.provenance;
  return { sink, framing: sink.framing, name: output.path, sidecars, summaryPath: `${output.path}.summary.json`, discard: () => sink.abort() };
}

/**
 * Writes to `sink.topic` (dead letters to `sink.deadLetterTopic`), creating them when missing with the
 * input topic's partition count (one partition for a file input), as the worker does.
 */
async function openTopicOutput(output: { readonly summary?: string }, input: ReplayInput, reader: KnownSchema, config: RaretideConfig | undefined): Promise<OpenedOutput> {
  const sections = requireSections(needConfig(config), 'replay --to-topic', ['kafka', 'sink']);
  const { kafka, sink: sinkConfig } = sections;
  const framingConfig = sinkConfig.framing ?? sections.source?.framing;
  if (framingConfig === undefined) {
    throw new UsageError('sink.framing is missing, and there is no source.framing to inherit: `raretide replay --to-topic` needs one; set sink.framing (raw or single-object).');
  }
  if (input.kind === 'topic' && sections.source?.topic === sinkConfig.topic) {
    throw new UsageError(`sink.topic ${sinkConfig.topic} is the topic replayed; write the replay to another topic.`);
  }
  const { output: framing } = await topicFramings(framingConfig, sinkConfig.framing, reader);
  const admin = await KafkaAdmin.connect(kafka);
  try {
    const partitions = input.kind === 'topic' && sections.source !== undefined ? await admin.partitionCount(sections.source.topic) : undefined;
    await admin.ensureTopics([sinkConfig.topic, sinkConfig.deadLetterTopic].map((topic) => ({ topic, partitions: partitions ?? 1 })));
  } finally {
    await admin.close();
  }
  const sink = await ReplayTopicSink.create(sections);
  return { sink, framing, name: `topic ${sinkConfig.topic}`, sidecars: { deadLetters: `topic ${sinkConfig.deadLetterTopic}` }, summaryPath: output.summary, discard: () => sink.close() };
}

function needConfig(config: RaretideConfig | undefined): RaretideConfig {
  if (config === undefined) throw new RaretideError('replay.no-config', 'a topic input or output is opened with the config (its kafka, source and sink sections); pass it', { retriable: false });
  return config;
}

export interface EndpointOptions {
  readonly file?: string;
  readonly fromTopic?: boolean;
  /** `--start-offset`: the same offset in every partition. */
  readonly startOffset?: string;
  /** `--start-time`: an ISO 8601 time. */
  readonly startTime?: string;
  readonly out?: string;
  readonly toTopic?: boolean;
  readonly summary?: string;
}

/** Exactly one input and one output must be named. */
export function endpointsFrom(options: EndpointOptions): { input: ReplayInput; output: ReplayOutput } {
  return { input: inputFrom(options), output: outputFrom(options) };
}

function inputFrom(options: EndpointOptions): ReplayInput {
  const fromTopic = options.fromTopic === true;
  if (options.file !== undefined && fromTopic) throw new UsageError('replay reads one input: give --file <in.avro> or --from-topic, not both.');
  if (!fromTopic && (options.startOffset !== undefined || options.startTime !== undefined)) {
    throw new UsageError('--start-offset and --start-time choose where a topic replay starts; add --from-topic, or drop them.');
  }
  if (options.file !== undefined) return { kind: 'file', path: options.file };
  if (!fromTopic) throw new UsageError('replay needs an input: --file <in.avro>, or --from-topic (the config\'s source.topic).');
  return { kind: 'topic', start: startFrom(options) };
}

function startFrom({ startOffset, startTime }: EndpointOptions): SnapshotStart {
  if (startOffset !== undefined && startTime !== undefined) throw new UsageError('give --start-offset or --start-time, not both.');
  if (startOffset !== undefined) {
    if (!/^[0-9]+$/.test(startOffset)) throw new UsageError(`--start-offset = ${JSON.stringify(startOffset)}: expected a whole number from 0, e.g. --start-offset 1000`);
    return { from: 'offset', offset: BigInt(startOffset) };
  }
  if (startTime !== undefined) {
    const timestamp = Date.parse(startTime);
    if (!/^\d{4}-\d{2}-\d{2}/.test(startTime) || Number.isNaN(timestamp)) {
      throw new UsageError(`--start-time = ${JSON.stringify(startTime)}: expected an ISO 8601 time, e.g. --start-time 2026-01-31T08:00:00Z`);
    }
    return { from: 'timestamp', timestamp };
  }
  return { from: 'earliest' };
}

function outputFrom(options: EndpointOptions): ReplayOutput {
  const toTopic = options.toTopic === true;
  if (options.out !== undefined && toTopic) throw new UsageError('replay writes one output: give --out <out.avro> or --to-topic, not both.');
  if (options.out !== undefined) {
    if (options.summary !== undefined) throw new UsageError('--summary is for --to-topic; a file output\'s summary goes beside it (<out>.summary.json).');
    return { kind: 'file', path: options.out };
  }
  if (!toTopic) throw new UsageError('replay needs an output: --out <out.avro>, or --to-topic (the config\'s sink.topic).');
  return options.summary === undefined ? { kind: 'topic' } : { kind: 'topic', summary: options.summary };
}

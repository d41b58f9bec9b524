/**
 * What a replay reads from and writes to. Files now; a topic source (earliest or an offset or
 * timestamp up to the end offsets taken at start) and a topic sink plug in here as further kinds,
 * each opening a `BatchSource` or `BatchSink` — the rest of the replay does not change.
 */
import { UsageError } from '../../../config/errors.js';
import type { ContainerCodec } from '../../avro/container/container-format.js';
import type { Framing } from '../../avro/framing.js';
import type { KnownSchema } from '../../avro/known-schema.js';
import { RawFraming } from '../../avro/raw-framing.js';
import { ReaderResolution } from '../../avro/resolution.js';
import { ContainerFileSink, type FileProvenance } from '../../files/container-sink.js';
import { ContainerFileSource } from '../../files/container-source.js';
import { syncMarkerFor } from '../../files/sync-marker.js';
import type { BatchSink, BatchSource } from '../../pipeline/source-sink.js';

export type ReplayInput = { readonly kind: 'file'; readonly path: string };
export type ReplayOutput = { readonly kind: 'file'; readonly path: string };

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
  /** Where the summary JSON goes. */
  readonly summaryPath: string;
}

export interface OutputSettings {
  /** The schema records are written in (the reader schema). */
  readonly recordSchema: KnownSchema;
  readonly provenance: FileProvenance;
  readonly seed: number;
  readonly modelId: string;
}

/** Opens the input; `reader` is the schema records will be read as, checked against the input's writer. */
export async function openInput(input: ReplayInput, reader: KnownSchema): Promise<OpenedInput> {
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

export async function openOutput(output: ReplayOutput, input: ReplayInput, settings: OutputSettings, codec: ContainerCodec = 'null'): Promise<OpenedOutput> {
  if (output.path === input.path) {
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
  return { sink, framing: sink.framing, name: output.path, sidecars, summaryPath: `${output.path}.summary.json` };
}

/** Exactly one input and one output must be named. */
export function endpointsFrom(options: { file?: string; out?: string }): { input: ReplayInput; output: ReplayOutput } {
  if (options.file === undefined) throw new UsageError('replay needs an input: --file <in.avro>.');
  if (options.out === undefined) throw new UsageError('replay needs an output: --out <out.avro>.');
  return { input: { kind: 'file', path: options.file }, output: { kind: 'file', path: options.out } };
}

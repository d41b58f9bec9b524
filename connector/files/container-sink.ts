import { RaretideError } from '../../config/errors.js';
import { ContainerFileWriter } from '../avro/container/container-writer.js';
import type { ContainerCodec } from '../avro/container/container-format.js';
import type { Framing } from '../avro/framing.js';
import type { KnownSchema } from '../avro/known-schema.js';
import { RawFraming } from '../avro/raw-framing.js';
import type { PartitionBalanceState } from '../pipeline/balance-state.js';
import { DEAD_LETTER_HEADERS } from '../pipeline/dead-letter.js';
import { PROVENANCE_HEADERS, fromHeaders, type ProvenanceTag } from '../pipeline/provenance.js';
import type { Clock } from '../pipeline/rate-limit.js';
import type { BatchSink, Checkpoint, DeliveryReport, OutputHeader, OutputMessage } from '../pipeline/source-sink.js';
import type { TopicPartition } from '../pipeline/topic-partition.js';
import { JsonLinesFile } from './json-lines-file.js';
import { ORIGINAL_FIELD_BYTES, provenanceFieldBytes, withProvenanceField } from './provenance-field.js';

/** Where provenance goes in file output (the `sink.provenance` config). */
export type FileProvenance = 'field' | 'sidecar';

export interface ContainerSinkOptions {
  /** The schema of the records: outputs must be framed raw with it (`framing`). */
  readonly recordSchema: KnownSchema;
  readonly provenance: FileProvenance;
  /** 16 bytes; a replay derives them from its seed for byte-identical output. */
  readonly syncMarker: Uint8Array;
  /** @default 'null' */
  readonly codec?: ContainerCodec;
  /** Extra container header entries (model id, seed…). @default {} */
  readonly metadata?: Readonly<Record<string, string>>;
  /** Stamps delivery reports. @default performance.now */
  readonly clock?: Clock;
}

/** The files a container sink writes. */
export interface ContainerSinkPaths {
  readonly output: string;
  /** `<output>.dead-letter.jsonl`: one line per dead letter, reason and base64 payload. */
  readonly deadLetters: string;
  /** `<output>.provenance.jsonl` in sidecar mode: one line per output record, in file order. */
  readonly provenance: string | undefined;
}

/**
 * An Avro container file as a sink. Outputs arrive framed raw with the record schema (the sink's
 * `framing`, which the core must use), so records go into blocks as they are; provenance is appended
 * to each as the `raretide_provenance` field, or written to a JSON-lines sidecar with the same header
 * names as topic output. Dead letters go to their own JSON-lines file. Nothing appears under the final
 * names until `close`; `abort` leaves no trace. There is no state to resume from: a file is written
 * in one go.
 */
export class ContainerFileSink implements BatchSink {
  /** The framing outputs must be encoded with. */
  readonly framing: Framing;
  private readonly listeners: ((report: DeliveryReport) => void)[] = [];
  private readonly clock: Clock;
  /** Records written to the output file so far: the index of the next one in the sidecar. */
  private written = 0;

  private constructor(
    readonly paths: ContainerSinkPaths,
    /** The schema of the written file (the record schema, plus the provenance field in field mode). */
    readonly fileSchema: KnownSchema,
    private readonly mode: FileProvenance,
    private readonly writer: ContainerFileWriter,
    private readonly deadLetters: JsonLinesFile,
    private readonly provenanceLines: JsonLinesFile | undefined,
    options: ContainerSinkOptions,
  ) {
    this.framing = new RawFraming(options.recordSchema);
    this.clock = options.clock ?? { now: () => performance.now() };
  }

  static async create(output: string, options: ContainerSinkOptions): Promise<ContainerFileSink> {
    const fileSchema = options.provenance === 'field' ? withProvenanceField(options.recordSchema) : options.recordSchema;
    const paths: ContainerSinkPaths = {
      output,
      deadLetters: `${output}.dead-letter.jsonl`,
      provenance: options.provenance === 'sidecar' ? `${output}.provenance.jsonl` : undefined,
    };
    const writer = await ContainerFileWriter.create(output, {
      schema: fileSchema,
      syncMarker: options.syncMarker,
      ...(options.codec === undefined ? {} : { codec: options.codec }),
      ...(options.metadata === undefined ? {} : { metadata: options.metadata }),
    });
    const opened: JsonLinesFile[] = [];
    try {
      opened.push(await JsonLinesFile.create(paths.deadLetters));
      if (paths.provenance !== undefined) opened.push(await JsonLinesFile.create(paths.provenance));
    } catch (error) {
      await writer.abort();
      await Promise.all(opened.map((file) => file.abort()));
      throw error;
    }
    return new ContainerFileSink(paths, fileSchema, options.provenance, writer, opened[0]!, opened[1], options);
  }

  async loadState(partitions: readonly TopicPartition[]): Promise<(PartitionBalanceState | undefined)[]> {
    return partitions.map(() => undefined);
  }

  async send(messages: readonly OutputMessage[]): Promise<void> {
    for (const message of messages) {
      if (message.route === 'dead-letter') {
        await this.deadLetters.append(deadLetterLine(message));
        continue;
      }
      if (this.mode === 'field') {
        await this.writer.appendEncoded(Buffer.concat([message.value, provenanceBytes(message)]));
      } else {
        await this.writer.appendEncoded(message.value);
        await this.provenanceLines!.append({ record: this.written, provenance: headerObject(message.headers) });
      }
      this.written += 1;
    }
    if (this.listeners.length > 0) {
      const deliveredAt = this.clock.now();
      for (const message of messages) for (const listener of this.listeners) listener({ message, deliveredAt, error: undefined });
    }
  }

  /** A file has no partial commit and no resume: it is made durable whole, on `close`. */
  async checkpoint(_checkpoint: Checkpoint): Promise<void> {}

  async abort(): Promise<void> {
    await Promise.all([this.writer.abort(), this.deadLetters.abort(), this.provenanceLines?.abort()]);
  }

  onDelivery(listener: (report: DeliveryReport) => void): void {
    this.listeners.push(listener);
  }

  async close(): Promise<void> {
    // The output file last: it never appears without its sidecars.
    try {
      await this.deadLetters.close();
      await this.provenanceLines?.close();
      await this.writer.close();
    } catch (error) {
      await this.abort();
      throw error;
    }
  }
}

/** The provenance field's bytes; an original (most records) is told by its kind header alone. */
function provenanceBytes(message: OutputMessage): Buffer {
  const kind = message.headers[0]?.[PROVENANCE_HEADERS.kind];
  return kind === 'original' ? ORIGINAL_FIELD_BYTES : provenanceFieldBytes(tagOf(message));
}

function tagOf(message: OutputMessage): ProvenanceTag {
  const tag = fromHeaders(message.headers);
  if (!tag.ok) {
    throw new RaretideError('files.provenance', `Output record from ${message.source.topic}:${message.source.partition}@${message.source.offset} carries no usable provenance: ${tag.problem.reason}.`);
  }
  return tag.value;
}

function headerObject(headers: readonly OutputHeader[]): Record<string, string> {
  return Object.assign({}, ...headers) as Record<string, string>;
}

function deadLetterLine(message: OutputMessage): unknown {
  const headers = headerObject(message.headers);
  return {
    topic: message.source.topic,
    partition: message.source.partition,
    offset: message.source.offset.toString(),
    code: headers[DEAD_LETTER_HEADERS.code],
    reason: headers[DEAD_LETTER_HEADERS.reason],
    headers,
    key: message.key === null ? null : message.key.toString('base64'),
    payload: message.value.toString('base64'),
  };
}

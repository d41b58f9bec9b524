import { UsageError } from '../../config/errors.js';
import type { KafkaConfig, SourceConfig } from '../../config/schema.js';
import { loadSchemaFile, type KnownSchema } from '../avro/known-schema.js';
import { PayloadDecoder } from '../avro/payload-decoder.js';
import { renderProblem } from '../avro/problems.js';
import { KafkaSnapshotSource } from '../kafka/snapshot-source.js';
import { inputFraming } from '../avro/framings-from-config.js';

/** The records of a topic snapshot, decoded into the reader schema, read as they are consumed. */
export interface TopicRecords {
  readonly schema: KnownSchema;
  readonly records: AsyncIterable<Record<string, unknown>>;
  readonly origin: string;
  /** Payloads that did not decode (skipped), with the first reason, once the records are read. */
  readonly undecodable: { count: number; firstReason: string | undefined };
  close(): Promise<void>;
}

/**
 * The schema records are read as: `source.readerSchemaFile`, else the framing's own schema file (the
 * first of a single-object list). Registry framing names no schema up front, so it needs the reader file.
 */
export async function topicReaderSchema(source: SourceConfig): Promise<KnownSchema> {
  if (source.readerSchemaFile !== undefined) return loadSchemaFile(source.readerSchemaFile);
  switch (source.framing.kind) {
    case 'raw':
      return loadSchemaFile(source.framing.schemaFile);
    case 'single-object':
      return loadSchemaFile(source.framing.schemaFiles[0]!);
    case 'registry':
      throw new UsageError(
        'source.readerSchemaFile is missing: with registry framing the schema to read records as must be given; ' +
          'set source.readerSchemaFile to your .avsc file',
      );
  }
}

/**
 * Opens `source.topic` as it stands now (earliest → end offsets taken at start) and decodes its records
 * one batch at a time, up to `limit` records; a topic larger than the sample is never held in memory.
 */
export async function openTopicRecords(kafka: KafkaConfig, source: SourceConfig, limit = Number.POSITIVE_INFINITY): Promise<TopicRecords> {
  const schema = await topicReaderSchema(source);
  const decoder = new PayloadDecoder(await inputFraming(source.framing, schema), { reader: schema });
  const snapshot = await KafkaSnapshotSource.open({ kafka, topic: source.topic, purpose: 'sample' });
  const undecodable: TopicRecords['undecodable'] = { count: 0, firstReason: undefined };
  async function* records(): AsyncGenerator<Record<string, unknown>> {
    let read = 0;
    while (read < limit) {
      const batch = await snapshot.nextBatch(Math.min(1_000, limit - read));
      if (batch === null) return;
      for (const message of batch) {
        if (read >= limit) return;
        const decoded = await decoder.decode(message.value);
        if (decoded.ok) {
          read++;
          yield decoded.value.value as Record<string, unknown>;
        } else {
          undecodable.count++;
          undecodable.firstReason ??= `partition ${message.partition} offset ${message.offset}: ${renderProblem(decoded.problem)}`;
        }
      }
    }
  }
  return { schema, records: records(), origin: `topic ${source.topic}`, undecodable, close: () => snapshot.close() };
}

import { loadSchemaFile, type KnownSchema } from '../avro/known-schema.js';
import { ContainerFileReader } from '../avro/container/container-reader.js';

/** The first records of an Avro container file, read as the reader schema when one is given. */
export interface RecordSample {
  /** The schema the records are in: the reader schema, else the file's own. */
  readonly schema: KnownSchema;
  readonly records: readonly Record<string, unknown>[];
  /** Where the records came from, for messages and summaries. */
  readonly origin: string;
}

/**
 * Reads up to `limit` records from the start of an Avro container file. Streaming: a file larger
 * than the sample is never read whole.
 */
export async function readFileSample(file: string, limit: number, readerSchemaFile?: string): Promise<RecordSample> {
  const reader = readerSchemaFile === undefined ? undefined : await loadSchemaFile(readerSchemaFile);
  const container = await ContainerFileReader.open(file, reader === undefined ? {} : { reader });
  const records: Record<string, unknown>[] = [];
  for await (const record of container) {
    records.push(record as Record<string, unknown>);
    if (records.length >= limit) break;
  }
  return { schema: reader ?? container.header.writer, records, origin: file };
}

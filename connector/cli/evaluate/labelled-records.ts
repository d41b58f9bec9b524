/**
 * The real records `raretide evaluate` scores against, each with its class read by the connector's own
 * label rule (label.ts), so the evaluation sees the classes the worker would. Read whole into memory:
 * an evaluation splits, resamples and compares them many times over.
 */
import { UsageError } from '../../../config/errors.js';
import type { KafkaConfig, SourceConfig } from '../../../config/schema.js';
import type { LabelledRecord } from '../../../model/quality/quality-report.js';
import { ContainerFileReader } from '../../avro/container/container-reader.js';
import { inputFraming } from '../../avro/framings-from-config.js';
import type { KnownSchema } from '../../avro/known-schema.js';
import { PayloadDecoder } from '../../avro/payload-decoder.js';
import { renderProblem } from '../../avro/problems.js';
import { ReaderResolution } from '../../avro/resolution.js';
import { KafkaSnapshotSource } from '../../kafka/snapshot-source.js';
import type { LabelReader } from '../../pipeline/label.js';
import type { InputMessage } from '../../pipeline/source-sink.js';

export interface LabelledSet {
  readonly records: LabelledRecord[];
  /** Names where the records came from, for messages and the report. */
  readonly origin: string;
  /** Records left out (no usable class, or a payload that did not decode), with the first reason. */
  readonly skipped: { count: number; firstReason: string | undefined };
}

/** Collects labelled records and the ones left out. */
class Collector {
  readonly records: LabelledRecord[] = [];
  readonly skipped: LabelledSet['skipped'] = { count: 0, firstReason: undefined };

  constructor(private readonly label: LabelReader) {}

  add(message: InputMessage, record: Record<string, unknown>, where: string): void {
    const className = this.label(message, record);
    if (className.ok) this.records.push({ record, className: className.value });
    else this.skip(`${where}: ${renderProblem(className.problem)}`);
  }

  skip(reason: string): void {
    this.skipped.count++;
    this.skipped.firstReason ??= reason;
  }
}

/** Every record of an Avro container file, read as `reader` (a file has no keys or headers). */
export async function readLabelledFile(path: string, reader: KnownSchema, label: LabelReader): Promise<LabelledSet> {
  const container = await ContainerFileReader.open(path, { reader });
  try {
    const resolved = new ReaderResolution(reader).resolverFor(container.header.writer);
    if (!resolved.ok) {
      throw new UsageError(`${path} cannot be read as ${reader.source}: ${resolved.problem.reason}; evaluate records of the schema the model was fitted on`, {
        code: 'avro.schema-mismatch',
      });
    }
    const collector = new Collector(label);
    let offset = 0n;
    for await (const record of container) {
      const message: InputMessage = { topic: path, partition: 0, offset, value: Buffer.alloc(0), key: null, headers: [], timestamp: undefined };
      collector.add(message, record as Record<string, unknown>, `record ${offset}`);
      offset++;
    }
    return { records: collector.records, origin: path, skipped: collector.skipped };
  } finally {
    container.close();
  }
}

/**
 * Every record of `source.topic` as it stands now (earliest to the end offsets taken at start), decoded
 * as `reader`; keys and headers are kept for a header or key label.
 */
export async function readLabelledTopic(kafka: KafkaConfig, source: SourceConfig, reader: KnownSchema, label: LabelReader): Promise<LabelledSet> {
  const decoder = new PayloadDecoder(await inputFraming(source.framing, reader), { reader });
  const snapshot = await KafkaSnapshotSource.open({ kafka, topic: source.topic, purpose: 'evaluate' });
  try {
    const collector = new Collector(label);
    for (let batch = await snapshot.nextBatch(1_000); batch !== null; batch = await snapshot.nextBatch(1_000)) {
      for (const message of batch) {
        const where = `partition ${message.partition} offset ${message.offset}`;
        const decoded = await decoder.decode(message.value);
        if (decoded.ok) collector.add(message, decoded.value.value as Record<string, unknown>, where);
        else collector.skip(`${where}: ${renderProblem(decoded.problem)}`);
      }
    }
    return { records: collector.records, origin: `topic ${source.topic} (snapshot: earliest to the end offsets at start)`, skipped: collector.skipped };
  } finally {
    await snapshot.close();
  }
}

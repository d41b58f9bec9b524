/**
 * `regenerate --from-topic`: the source record of a tag is read from the config's `source.topic` at the
 * tag's partition and offset (a snapshot of that one partition from that offset), and decoded with the
 * topic's framing (`source.framing`), as the worker and a topic replay decode it.
 */
import { RaretideError, UsageError } from '../../../config/errors.js';
import type { KafkaConfig } from '../../../config/schema.js';
import { requireSections } from '../../../config/requirements.js';
import { inputFraming } from '../../avro/framings-from-config.js';
import { KafkaSnapshotSource } from '../../kafka/snapshot-source.js';
import type { InputMessage } from '../../pipeline/source-sink.js';
import type { CliContext } from '../cli-context.js';
import { loadModel, type SingleRecordSession } from './regenerate-session.js';

export interface TopicSessionRequest {
  readonly configPath: string;
  /** Overrides `model.dir`. */
  readonly modelDir?: string;
}

export async function openTopicSession(request: TopicSessionRequest, context: CliContext): Promise<SingleRecordSession> {
  const loaded = await loadModel(request, context);
  try {
    const { kafka, source } = requireSections(loaded.config, 'regenerate --from-topic', ['kafka', 'source']);
    const framing = await inputFraming(source.framing, loaded.reader);
    return {
      regenerator: loaded.regeneratorFor(framing),
      reader: loaded.reader,
      async sourceRecord(tag, where) {
        const { topic, partition, offset } = tag.source;
        if (topic !== source.topic) {
          throw new UsageError(`${where} was made from topic ${topic}, but source.topic is ${source.topic}; regenerate it with the config of the replay that read ${topic}.`, {
            code: 'regenerate.other-source',
          });
        }
        return fetchSourceRecord(kafka, topic, partition, offset);
      },
      async close() {
        loaded.synthesizer.dispose();
      },
    };
  } catch (error) {
    loaded.synthesizer.dispose();
    throw error;
  }
}

/** The record at `topic:partition@offset`; fails when the topic no longer holds it (compacted, deleted, expired). */
export async function fetchSourceRecord(kafka: KafkaConfig, topic: string, partition: number, offset: bigint): Promise<InputMessage> {
  const snapshot = await KafkaSnapshotSource.open({ kafka, topic, partitions: [partition], start: { from: 'offset', offset }, purpose: 'regenerate' });
  try {
    // The snapshot ends at the partition's end offset taken at open, so this loop ends.
    for (let batch = await snapshot.nextBatch(1); batch !== null; batch = await snapshot.nextBatch(1)) {
      const first = batch[0];
      if (first === undefined) continue;
      if (first.offset === offset) return first;
      throw gone(topic, partition, offset, `its first record from there is at offset ${first.offset} (the record was compacted away or deleted)`);
    }
    throw gone(topic, partition, offset, `no record is at or after it (the partition's end offset is ${snapshot.spans[0]!.end})`);
  } finally {
    await snapshot.close();
  }
}

function gone(topic: string, partition: number, offset: bigint, why: string): RaretideError {
  return new RaretideError('regenerate.source-gone', `Topic ${topic} partition ${partition} has no record at offset ${offset} now: ${why}; the source record cannot be read again.`, {
    retriable: false,
  });
}

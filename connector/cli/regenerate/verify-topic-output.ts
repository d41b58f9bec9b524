/**
 * `regenerate --verify --from-topic --out-topic <topic>`: every synthetic record of an output topic (what
 * `replay --to-topic` or the worker writes, tagged by `raretide.*` headers) made again from its source
 * record in `source.topic` and compared byte for byte with its value, framed as `sink.framing` frames.
 *
 * The output topic is read whole as a snapshot (earliest to the end offsets taken at start). Source
 * records are then read forward once per source partition, from the lowest offset any tag names, and
 * regenerated in batches (one model call per batch). The output's synthetic values are held in memory
 * meanwhile (tens of bytes each for typical records), so the source is read only where tags point.
 */
import { RaretideError, UsageError } from '../../../config/errors.js';
import type { KafkaConfig } from '../../../config/schema.js';
import { requireSections } from '../../../config/requirements.js';
import type { Framing } from '../../avro/framing.js';
import { topicFramings } from '../../avro/framings-from-config.js';
import { KafkaSnapshotSource } from '../../kafka/snapshot-source.js';
import type { Clock } from '../../pipeline/rate-limit.js';
import { fromHeaders, type SyntheticTag } from '../../pipeline/provenance.js';
import type { InputMessage } from '../../pipeline/source-sink.js';
import { duration } from '../replay/progress-line.js';
import type { CliContext } from '../cli-context.js';
import { loadModel } from './regenerate-session.js';
import type { Regenerator } from './regenerator.js';
import { describeTag } from './tag-input.js';

/** Synthetic records regenerated per model call: enough rows to keep the network's passes efficient. */
const VERIFY_BATCH = 2048;
/** Mismatches listed in the summary. */
const LISTED_MISMATCHES = 5;
/** Records read from a topic per poll. */
const READ_BATCH = 1000;

export interface TopicVerifyRequest {
  readonly configPath: string;
  /** The output topic to check. */
  readonly outputTopic: string;
  /** Overrides `model.dir`. */
  readonly modelDir?: string;
}

export interface TopicVerifyOptions {
  readonly clock: Clock;
  /** Receives a progress line per stage. */
  readonly progress?: (line: string) => void;
  /** Synthetic records regenerated per model call. @default 2048 */
  readonly batchSize?: number;
}

/** A record of the output topic, by its place there. */
export interface OutputPlace {
  readonly partition: number;
  readonly offset: bigint;
}

export interface TopicMismatch extends OutputPlace {
  /** Its provenance, as text; undefined when unreadable. */
  readonly provenance: string | undefined;
  readonly reason: string;
}

export interface TopicVerifySummary {
  readonly outputTopic: string;
  readonly sourceTopic: string;
  readonly modelId: string;
  /** Records in the output topic's snapshot. */
  readonly records: number;
  /** Originals passed through (not regenerated: they carry no sample to make). */
  readonly originals: number;
  readonly checked: number;
  readonly matched: number;
  readonly mismatched: number;
  /** The first few, in output partition and offset order. */
  readonly mismatches: readonly TopicMismatch[];
  readonly elapsedMs: number;
}

interface Pending {
  readonly place: OutputPlace;
  readonly value: Buffer;
  readonly tag: SyntheticTag;
}

export async function verifyTopicOutput(request: TopicVerifyRequest, context: CliContext, options: TopicVerifyOptions): Promise<TopicVerifySummary> {
  const started = options.clock.now();
  const loaded = await loadModel(request, context);
  try {
    const { kafka, source, sink } = requireSections(loaded.config, 'regenerate --verify --from-topic', ['kafka', 'source']);
    const framings = await topicFramings(source.framing, sink?.framing, loaded.reader);
    const regenerator = loaded.regeneratorFor(framings.input);
    const mismatches: TopicMismatch[] = [];
    const miss = (place: OutputPlace, tag: SyntheticTag | undefined, reason: string) =>
      mismatches.push({ ...place, provenance: tag === undefined ? undefined : describeTag(tag), reason });

    const output = await readOutputTopic(request.outputTopic, kafka, regenerator, source.topic, miss);
    options.progress?.(`verify: ${output.records.toLocaleString('en-US')} records read from ${request.outputTopic}, ${output.pending.length.toLocaleString('en-US')} synthetic to check\n`);

    const compare = compareWith(framings.output, miss);
    const bySourcePartition = new Map<number, Pending[]>();
    for (const item of output.pending) {
      const list = bySourcePartition.get(item.tag.source.partition) ?? [];
      list.push(item);
      bySourcePartition.set(item.tag.source.partition, list);
    }
    for (const [partition, items] of [...bySourcePartition].sort(([a], [b]) => a - b)) {
      await checkPartition(kafka, source.topic, partition, items, regenerator, compare, miss, options.batchSize ?? VERIFY_BATCH);
      options.progress?.(`verify: source partition ${partition} done, ${mismatches.length} mismatched so far\n`);
    }

    mismatches.sort((a, b) => a.partition - b.partition || (a.offset < b.offset ? -1 : a.offset > b.offset ? 1 : 0));
    const checked = output.pending.length + output.unreadable;
    return {
      outputTopic: request.outputTopic,
      sourceTopic: source.topic,
      modelId: regenerator.modelId,
      records: output.records,
      originals: output.originals,
      checked,
      matched: checked - mismatches.length,
      mismatched: mismatches.length,
      mismatches: mismatches.slice(0, LISTED_MISMATCHES),
      elapsedMs: options.clock.now() - started,
    };
  } finally {
    loaded.synthesizer.dispose();
  }
}

type Miss = (place: OutputPlace, tag: SyntheticTag | undefined, reason: string) => void;

/** The output topic's synthetic records; unreadable provenance is a mismatch, originals are counted. */
async function readOutputTopic(topic: string, kafka: KafkaConfig, regenerator: Regenerator, sourceTopic: string, miss: Miss) {
  const snapshot = await KafkaSnapshotSource.open({ kafka, topic, purpose: 'regenerate-verify' });
  const pending: Pending[] = [];
  let records = 0;
  let originals = 0;
  let unreadable = 0;
  try {
    for (let batch = await snapshot.nextBatch(READ_BATCH); batch !== null; batch = await snapshot.nextBatch(READ_BATCH)) {
      for (const message of batch) {
        records++;
        const place = { partition: message.partition, offset: message.offset };
        const tag = fromHeaders(message.headers);
        if (!tag.ok) {
          unreadable++;
          miss(place, undefined, `its provenance is unreadable: ${tag.problem.name} ${tag.problem.reason}`);
          continue;
        }
        if (tag.value.kind === 'original') {
          originals++;
          continue;
        }
        const where = `Record ${topic}:${message.partition}@${message.offset}`;
        regenerator.checkModel(tag.value.modelId, where);
        if (tag.value.source.topic !== sourceTopic) {
          throw new UsageError(`${where} was made from topic ${tag.value.source.topic}, but source.topic is ${sourceTopic}; verify it with the config of the replay or worker that read ${tag.value.source.topic}.`, {
            code: 'regenerate.other-source',
          });
        }
        pending.push({ place, value: message.value, tag: tag.value });
      }
    }
  } finally {
    await snapshot.close();
  }
  return { pending, records, originals, unreadable };
}

/** Compares a regeneration with the written value, noting a mismatch when they differ. */
function compareWith(outputFraming: Framing, miss: Miss) {
  return (item: Pending, regenerated: { ok: true; record: unknown } | { ok: false; reason: string }): void => {
    if (!regenerated.ok) return miss(item.place, item.tag, regenerated.reason);
    let payload: Buffer;
    try {
      payload = outputFraming.frame(regenerated.record);
    } catch (error) {
      if (!(error instanceof RaretideError && error.code === 'avro.invalid-record')) throw error;
      return miss(item.place, item.tag, `the output framing refuses its regeneration (${error.message})`);
    }
    if (payload.equals(item.value)) return;
    const at = firstDifferingByte(payload, item.value);
    miss(item.place, item.tag, `its value differs from its regeneration from byte ${at} (value ${item.value.length} bytes, regenerated ${payload.length})`);
  };
}

function firstDifferingByte(a: Buffer, b: Buffer): number {
  const length = Math.min(a.length, b.length);
  for (let index = 0; index < length; index++) if (a[index] !== b[index]) return index;
  return length;
}

/** Reads source partition `partition` forward from the lowest offset needed and checks every item of it. */
async function checkPartition(
  kafka: KafkaConfig,
  topic: string,
  partition: number,
  items: readonly Pending[],
  regenerator: Regenerator,
  compare: ReturnType<typeof compareWith>,
  miss: Miss,
  batchSize: number,
): Promise<void> {
  const byOffset = new Map<bigint, Pending[]>();
  for (const item of items) byOffset.set(item.tag.source.offset, [...(byOffset.get(item.tag.source.offset) ?? []), item]);
  const offsets = [...byOffset.keys()].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
  let jobs: { message: InputMessage; items: Pending[] }[] = [];
  let queued = 0;
  const flush = async () => {
    if (jobs.length === 0) return;
    const results = await regenerator.regenerate(jobs.map(({ message, items: members }) => ({ message, tags: members.map((member) => member.tag) })));
    results.forEach((perTag, job) => perTag.forEach((result, t) => compare(jobs[job]!.items[t]!, result)));
    jobs = [];
    queued = 0;
  };
  const gone = (offset: bigint, why: string) => {
    for (const item of byOffset.get(offset)!) miss(item.place, item.tag, `its source record ${topic}:${partition}@${offset} cannot be read again: ${why}`);
  };

  let next = 0;
  const snapshot = await KafkaSnapshotSource.open({ kafka, topic, partitions: [partition], start: { from: 'offset', offset: offsets[0]! }, purpose: 'regenerate-verify' });
  try {
    for (let batch = await snapshot.nextBatch(READ_BATCH); batch !== null; batch = next < offsets.length ? await snapshot.nextBatch(READ_BATCH) : null) {
      for (const message of batch) {
        // Offsets skipped over were compacted away or deleted.
        while (next < offsets.length && offsets[next]! < message.offset) gone(offsets[next++]!, 'the topic no longer holds it');
        if (next >= offsets.length || offsets[next] !== message.offset) continue;
        const members = byOffset.get(offsets[next++]!)!;
        jobs.push({ message, items: members });
        queued += members.length;
        if (queued >= batchSize) await flush();
      }
    }
    while (next < offsets.length) gone(offsets[next++]!, `the partition ends before it (its end offset is ${snapshot.spans[0]!.end})`);
    await flush();
  } finally {
    await snapshot.close();
  }
}

export function renderTopicVerifySummary(summary: TopicVerifySummary): string {
  const lines = [
    `verified topic ${summary.outputTopic} against topic ${summary.sourceTopic} with model ${summary.modelId} (provenance in headers) in ${duration(summary.elapsedMs)}`,
    `records: ${summary.records} (${summary.originals} originals, not regenerated); synthetic checked ${summary.checked}, matched ${summary.matched}, mismatched ${summary.mismatched}`,
  ];
  for (const mismatch of summary.mismatches) {
    lines.push(`  record ${summary.outputTopic}:${mismatch.partition}@${mismatch.offset}${mismatch.provenance === undefined ? '' : ` (${mismatch.provenance})`}: ${mismatch.reason}`);
  }
  if (summary.mismatched > summary.mismatches.length) lines.push(`  … and ${summary.mismatched - summary.mismatches.length} more`);
  return `${lines.join('\n')}\n`;
}

/** Exit 1 naming the first mismatching record, when there is one. */
export function failOnTopicMismatch(summary: TopicVerifySummary): void {
  const first = summary.mismatches[0];
  if (first === undefined) return;
  throw new RaretideError(
    'regenerate.mismatch',
    `${summary.mismatched} of ${summary.checked} synthetic records of topic ${summary.outputTopic} do not match their regeneration; the first is record ${summary.outputTopic}:${first.partition}@${first.offset}` +
      `${first.provenance === undefined ? '' : ` (${first.provenance})`}: ${first.reason}.`,
  );
}

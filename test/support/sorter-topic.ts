import { join } from 'node:path';
import { fitModel } from '../../model/fit.js';
import { saveModel } from '../../model/vae/index.js';
import { SORTER_EVENT_SCHEMA, messagesOf, sorterEvents } from '../unit/pipeline/support/sorter-events.js';
import { connectProducer, flushAndDisconnect } from './kafka-clients.js';
import { produceWithBackpressure } from './produce-with-backpressure.js';
import { createUniqueTopic } from './topics.js';

type SorterEvents = ReturnType<typeof sorterEvents>;

/** A new topic of `records` invented sorter events (3 % jam, 2 % misroute) spread over `partitions`. */
export async function produceSorterTopic(
  brokers: string,
  options: { prefix: string; partitions: number; records: number; seed: number },
): Promise<{ topic: string; events: SorterEvents }> {
  const events = sorterEvents(options.records, { jam: 0.03, misroute: 0.02 }, options.seed);
  const topic = await createUniqueTopic(brokers, { prefix: options.prefix, partitions: options.partitions });
  const producer = await connectProducer({ 'metadata.broker.list': brokers });
  try {
    for (const message of messagesOf(events, options.partitions, topic)) {
      await produceWithBackpressure(producer, { topic, partition: message.partition, value: message.value, key: message.key, timestamp: message.timestamp ?? null });
    }
  } finally {
    await flushAndDisconnect(producer);
  }
  return { topic, events };
}

/** The tiny sorter model the CLI tests use (fits in about a second), saved to `<workspace>/model`. */
export async function saveTinySorterModel(events: SorterEvents, workspace: string, training: { epochs: number; seed: number }): Promise<string> {
  const fitted = await fitModel({
    schema: SORTER_EVENT_SCHEMA,
    records: events as never,
    labelPath: 'outcome',
    training: { hidden: [16], latent: 2, batchSize: 256, ...training },
  });
  const modelDir = join(workspace, 'model');
  try {
    await saveModel(modelDir, fitted.bundle);
  } finally {
    fitted.dispose();
  }
  return modelDir;
}

/** A raretide config (YAML) replaying a sorter topic with the tiny model; with `sinkTopic`, a topic sink too. */
export function sorterTopicConfig(options: {
  brokers: string;
  sourceTopic: string;
  group: string;
  schemaFile: string;
  modelDir: string;
  seed: number;
  sinkTopic?: string;
}): string {
  return [
    `kafka: {brokers: "${options.brokers}"}`,
    'source:',
    `  topic: ${options.sourceTopic}`,
    `  group: ${options.group}`,
    `  framing: {kind: raw, schemaFile: ${options.schemaFile}}`,
    ...(options.sinkTopic === undefined ? [] : [`sink: {topic: ${options.sinkTopic}, deadLetterTopic: ${options.sinkTopic}.dead-letter}`]),
    'label: {from: field, path: outcome}',
    'balance:',
    '  targets: {jam: 0.1, misroute: 0.05}',
    '  maxPerRecord: 5',
    `  seed: ${options.seed}`,
    `model: {dir: ${options.modelDir}}`,
    '',
  ].join('\n');
}

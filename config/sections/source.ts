import * as z from 'zod';
import { filePath, nonEmptyString, topicName } from './common.js';
import { framingSchema } from './framing.js';

export const sourceSection = z
  .object({
    /** Topic the worker consumes. */
    topic: topicName().meta({ description: 'Topic the worker consumes.', examples: ['sorter.events'] }),
    /** Kafka consumer group id; replicas sharing it split the topic's partitions. */
    group: nonEmptyString().meta({
      description: "Consumer group id; replicas sharing it split the topic's partitions.",
      examples: ['raretide-sorter'],
    }),
    /** How the topic's values are framed and where their writer schemas come from. */
    framing: framingSchema,
    /**
     * Reader schema (`.avsc`) records are resolved to, so several writer versions decode alike.
     * @default the writer schema
     */
    readerSchemaFile: filePath()
      .optional()
      .meta({ description: 'Reader schema records are resolved to; absent: the writer schema.', examples: ['schemas/reading.avsc'] }),
  })
  .strict()
  .meta({ description: 'The topic of real records to learn from and augment.' });

export type SourceConfig = z.infer<typeof sourceSection>;

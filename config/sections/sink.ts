import * as z from 'zod';
import { topicName } from './common.js';
import { framingSchema } from './framing.js';

export const sinkSection = z
  .object({
    /** Topic synthetic records (and passed-through originals) are written to. */
    topic: topicName().meta({ description: 'Topic synthetic records are written to.', examples: ['sorter.events.balanced'] }),
    /**
     * How written values are framed.
     * @default the source's framing
     */
    framing: framingSchema.optional().meta({ description: "How written values are framed; absent: the source's framing." }),
    /**
     * Also copy every original record to `topic`, making it a balanced copy of the stream.
     * @default false
     */
    includeOriginals: z
      .boolean()
      .default(false)
      .meta({ description: 'Also copy every original record to `topic`, making it a balanced copy of the stream.' }),
    /**
     * Where an Avro file output carries provenance: `field` adds the optional record field
     * `raretide_provenance` (null for originals); `sidecar` leaves the schema alone and writes one JSON
     * line per output record to `<out>.provenance.jsonl`. Topic output always uses headers.
     * @default field
     */
    provenance: z
      .enum(['field', 'sidecar'])
      .default('field')
      .meta({ description: 'Avro file output: provenance as an added optional field (`field`) or in a JSON-lines sidecar (`sidecar`).' }),
    /** Topic for records that cannot be decoded, labelled or validated; the reason travels in headers. */
    deadLetterTopic: topicName().meta({
      description: 'Topic for records that cannot be decoded, labelled or validated (reason in headers).',
      examples: ['sorter.events.dead-letter'],
    }),
  })
  .strict()
  .meta({ description: 'Where synthetic records, passed-through originals and dead letters go.' });

export type SinkConfig = z.infer<typeof sinkSection>;

import * as z from 'zod';
import { positiveInt, topicName } from './common.js';

export const deliverySection = z
  .object({
    /**
     * `at-least-once` commits an offset once all its outputs are acknowledged (a crash may repeat some);
     * `exactly-once` writes each batch's outputs, state and offsets in one Kafka transaction.
     * @default at-least-once
     */
    guarantee: z
      .enum(['at-least-once', 'exactly-once'])
      .default('at-least-once')
      .meta({ description: '`at-least-once` (a crash may repeat outputs) or `exactly-once` (one transaction per batch).' }),
    /**
     * Most source records handled as one batch (one model call, one commit or transaction).
     * @default 500
     */
    batchSize: positiveInt()
      .default(500)
      .meta({ description: 'Most source records handled as one batch (one model call, one commit or transaction).' }),
    /**
     * Compacted topic holding per-partition class counts, written with the offsets so restarts keep them.
     * @default raretide-state.<source.group>
     */
    stateTopic: topicName()
      .optional()
      .meta({ description: 'Compacted topic for per-partition class counts; absent: `raretide-state.<source.group>`.' }),
  })
  .strict()
  .meta({ description: 'Delivery guarantee, batching and where balance counts persist.' });

export type DeliveryConfig = z.infer<typeof deliverySection>;

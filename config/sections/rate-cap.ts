import * as z from 'zod';
import { positiveInt } from './common.js';

export const rateCapSection = z
  .object({
    /** Steady rate of synthetic records per second (a token bucket refilled at this rate). */
    perSecond: z
      .number()
      .gt(0)
      .meta({ description: 'Steady rate of synthetic records per second (token bucket refill).', examples: [200] }),
    /** Synthetic records allowed at once above the steady rate (the bucket's size). */
    burst: positiveInt().meta({ description: "Synthetic records allowed at once above the steady rate (bucket size).", examples: [400] }),
    /**
     * What happens when the bucket is empty: `wait` pauses consumption so every rare record is still
     * served; `thin` makes fewer synthetic records and counts the shortfall.
     * @default wait
     */
    whenExceeded: z
      .enum(['wait', 'thin'])
      .default('wait')
      .meta({ description: '`wait` pauses consumption (nothing skipped); `thin` makes fewer synthetic records and counts them.' }),
  })
  .strict()
  .meta({ description: 'Upper bound on synthetic records per second; absent: no cap.' });

export type RateCapConfig = z.infer<typeof rateCapSection>;

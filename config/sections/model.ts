import * as z from 'zod';
import { filePath } from './common.js';

const privacyGuardSchema = z
  .object({
    /**
     * Which real records a synthetic record must keep its distance from: `off`; `source`, the record it
     * was made from; `class`, every training record of its class (slower).
     * @default source
     */
    scope: z
      .enum(['off', 'source', 'class'])
      .default('source')
      .meta({ description: '`off`, `source` (the record it was made from) or `class` (all training records of its class).' }),
    /**
     * Smallest allowed distance to those records in the model's standardised feature space; closer
     * synthetic records are dropped and counted.
     * @default 0.05
     */
    minDistance: z
      .number()
      .min(0)
      .default(0.05)
      .meta({ description: "Smallest allowed distance in the model's standardised feature space; closer ones are dropped." }),
  })
  .strict()
  .meta({ description: 'Rejects synthetic records that copy a real record too closely.' });

export const modelSection = z
  .object({
    /** Directory of the trained model (written by fit, read by run and replay). */
    dir: filePath().meta({ description: 'Directory of the trained model (written by fit, read by run and replay).', examples: ['models/sorter'] }),
    /**
     * Guard against synthetic records that copy a real one.
     * @default {scope: source, minDistance: 0.05}
     */
    privacyGuard: privacyGuardSchema.prefault({}),
  })
  .strict()
  .meta({ description: 'The trained model and the checks on what it makes.' });

export type ModelConfig = z.infer<typeof modelSection>;
export type PrivacyGuardConfig = z.infer<typeof privacyGuardSchema>;

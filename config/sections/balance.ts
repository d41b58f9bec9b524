import * as z from 'zod';
import { nonEmptyString, positiveInt, seed, share } from './common.js';

const countingSchema = z
  .discriminatedUnion('mode', [
    z
      .object({
        /** Counts grow for ever: the shares hold over the whole stream (replays, bounded runs). */
        mode: z.literal('cumulative').meta({ description: 'Counts grow for ever; shares hold over the whole stream.' }),
      })
      .strict(),
    z
      .object({
        /** Counts decay so recent records weigh most: the shares hold over a sliding horizon (live streams). */
        mode: z.literal('half-life').meta({ description: 'Counts decay so the shares hold over a recent horizon.' }),
        /** Number of source records after which a count has decayed to half. */
        halfLifeRecords: z
          .number()
          .gt(0)
          .meta({ description: 'Source records after which a count has decayed to half.', examples: [100000] }),
      })
      .strict(),
  ])
  .meta({ description: 'How class counts accumulate: `cumulative` or `half-life`.' });

export const balanceSection = z
  .object({
    /**
     * Target share of the combined output stream (originals + synthetic) for each rare class. Classes not
     * named here are never oversampled. Shares must sum to less than 1.
     */
    targets: z
      .record(nonEmptyString().meta({ title: 'class' }), share().meta({ examples: [0.05] }))
      .superRefine((targets, context) => {
        const shares = Object.values(targets);
        // Out-of-range shares are reported one by one; a sum over them would only repeat the news.
        if (shares.some((value) => !(value > 0 && value < 1))) return;
        if (shares.length === 0) {
          context.addIssue({ code: 'custom', input: targets, message: 'expected at least one class, e.g. {jam: 0.05}' });
          return;
        }
        const total = shares.reduce((sum, value) => sum + value, 0);
        if (total >= 1) {
          context.addIssue({
            code: 'custom',
            input: targets,
            message: `the shares sum to ${Number(total.toFixed(6))}; they must sum to less than 1 (the rest is the common classes) — lower some targets`,
          });
        }
      })
      .meta({
        description: 'Target share of the combined stream for each rare class (sum < 1); other classes are never oversampled.',
        examples: [{ jam: 0.05, misroute: 0.03 }],
      }),
    /**
     * Most synthetic records made from one rare record (k).
     * @default 5
     */
    maxPerRecord: positiveInt()
      .default(5)
      .meta({ description: 'Most synthetic records made from one rare record (k).' }),
    /**
     * Scale of the latent noise around each rare record: below 1 stays closer to it, above 1 wanders further.
     * @default 1
     */
    temperature: z
      .number()
      .gt(0)
      .default(1)
      .meta({ description: 'Scale of the latent noise around each rare record (< 1 closer, > 1 further).', examples: [0.8] }),
    /**
     * Seed of the sampling noise and of the rounding of fractional deficits; same seed, same model, same output.
     * @default 1
     */
    seed: seed()
      .default(1)
      .meta({ description: 'Seed of sampling noise and deficit rounding; same seed and model give the same output.' }),
    /**
     * How class counts accumulate.
     * @default {mode: cumulative}
     */
    counting: countingSchema.default({ mode: 'cumulative' }),
  })
  .strict()
  .meta({ description: 'The class-balance target the worker steers the output stream towards.' });

export type BalanceConfig = z.infer<typeof balanceSection>;
export type CountingConfig = z.infer<typeof countingSchema>;

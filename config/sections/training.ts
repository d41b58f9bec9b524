import * as z from 'zod';
import { positiveInt, seed } from './common.js';

/** Hyper-parameters of the conditional VAE; the defaults suit tables of a few dozen fields. */
export const trainingSection = z
  .object({
    /**
     * Dimensions of the latent code z.
     * @default 8
     */
    latentSize: positiveInt().default(8).meta({ description: 'Dimensions of the latent code z.' }),
    /**
     * Widths of the hidden layers of the encoder (the decoder mirrors them).
     * @default [128, 128]
     */
    hidden: z
      .array(positiveInt())
      .min(1, { error: 'expected a list of at least one layer width, e.g. [128, 128]' })
      .default([128, 128])
      .meta({ description: 'Widths of the encoder hidden layers (the decoder mirrors them).' }),
    /**
     * Most passes over the training data (early stopping may end sooner).
     * @default 60
     */
    epochs: positiveInt().default(60).meta({ description: 'Most passes over the training data (early stopping may end sooner).' }),
    /**
     * Records per minibatch (class-balanced).
     * @default 256
     */
    batchSize: positiveInt().default(256).meta({ description: 'Records per class-balanced minibatch.' }),
    /**
     * Weight of the KL term in the loss (negative ELBO).
     * @default 1
     */
    beta: z.number().gt(0).default(1).meta({ description: 'Weight of the KL term in the loss (negative ELBO).' }),
    /**
     * Epochs over which the KL weight ramps linearly from 0 to `beta`.
     * @default 10
     */
    klWarmupEpochs: z.int().min(0).default(10).meta({ description: 'Epochs over which the KL weight ramps from 0 to `beta`.' }),
    /**
     * Adam learning rate.
     * @default 0.002
     */
    learningRate: z.number().gt(0).default(0.002).meta({ description: 'Adam learning rate.' }),
    /**
     * Share of records held out to measure validation loss for early stopping.
     * @default 0.1
     */
    validationShare: z
      .number()
      .gt(0)
      .lt(1)
      .default(0.1)
      .meta({ description: 'Share of records held out for the validation loss that drives early stopping.' }),
    /**
     * Epochs without a better validation loss before training stops.
     * @default 8
     */
    patience: positiveInt().default(8).meta({ description: 'Epochs without a better validation loss before training stops.' }),
    /**
     * Seed of weight initialisation, shuffling and the validation split.
     * @default 1
     */
    seed: seed().default(1).meta({ description: 'Seed of weight initialisation, shuffling and the validation split.' }),
  })
  .strict()
  .meta({ description: 'Hyper-parameters of the conditional VAE.' });

export type TrainingConfig = z.infer<typeof trainingSection>;

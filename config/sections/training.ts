import * as z from 'zod';
import { positiveInt, seed } from './common.js';

/**
 * Hyper-parameters of the conditional VAE. Keys and defaults are those of the model's
 * `VaeHyperParameters` (model/vae/hyperparameters.ts, where the defaults were measured), so `fit`
 * passes this section through unchanged; a test checks the two agree.
 */
export const trainingSection = z
  .object({
    /**
     * Dimensions of the latent code z.
     * @default 8
     */
    latent: positiveInt().default(8).meta({ description: 'Dimensions of the latent code z.' }),
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
     * @default 100
     */
    epochs: positiveInt().default(100).meta({ description: 'Most passes over the training data (early stopping may end sooner).' }),
    /**
     * Most records per minibatch (class-balanced). On small data sets training halves it (not below 32)
     * until an epoch has at least 10 steps.
     * @default 512
     */
    batchSize: positiveInt().default(512).meta({ description: 'Most records per class-balanced minibatch; halved on small data sets so an epoch has ≥ 10 steps.' }),
    /**
     * Weight of the KL term in the loss (negative ELBO).
     * @default 1
     */
    beta: z.number().gt(0).default(1).meta({ description: 'Weight of the KL term in the loss (negative ELBO).' }),
    /**
     * Epochs over which the KL weight ramps linearly from 0 to `beta`.
     * @default 10
     */
    warmupEpochs: z.int().min(0).default(10).meta({ description: 'Epochs over which the KL weight ramps from 0 to `beta`.' }),
    /**
     * Adam learning rate.
     * @default 0.002
     */
    learningRate: z.number().gt(0).max(1).default(0.002).meta({ description: 'Adam learning rate.' }),
    /**
     * How minibatches weight classes: class c is drawn with probability ∝ count_c^classTempering;
     * 0 draws every class equally often, 1 at its natural frequency.
     * @default 0
     */
    classTempering: z
      .number()
      .min(0)
      .max(1)
      .default(0)
      .meta({ description: 'Class c is drawn into minibatches ∝ count^classTempering: 0 balanced, 1 natural.' }),
    /**
     * Share of each class held out to measure validation loss for early stopping.
     * @default 0.1
     */
    validationFraction: z
      .number()
      .min(0)
      .max(0.9)
      .default(0.1)
      .meta({ description: 'Share of each class held out for the validation loss that drives early stopping.' }),
    /**
     * Epochs without a better validation loss before training stops (the best weights are kept).
     * @default 10
     */
    patience: positiveInt().default(10).meta({ description: 'Epochs without a better validation loss before training stops.' }),
    /**
     * Seed of weight initialisation, shuffling and the validation split.
     * @default 1
     */
    seed: seed().default(1).meta({ description: 'Seed of weight initialisation, shuffling and the validation split.' }),
  })
  .strict()
  .meta({ description: 'Hyper-parameters of the conditional VAE.' });

export type TrainingConfig = z.infer<typeof trainingSection>;

/**
 * Everything that shapes a trained model; all overridable. Defaults chosen by measurement on the
 * reference shape (30 features: 22 continuous, two categoricals, one nullable; 20 000 invented rows,
 * 5 % rare; WASM, 2 shared cores), best class-weighted validation −ELBO and wall time:
 *   batch 512, lr 0.002: 11.36 in 70 s · batch 512, lr 0.004: 11.49 in 36 s ·
 *   batch 256, lr 0.002: 11.44 in 82 s · batch 256, lr 0.001: 11.42 in 102 s;
 *   hidden 64×64: 11.40 · 256×256: 11.78 (slower, stopped early); latent 4: 11.53 · 16: 11.67.
 * 2×128 and latent 8 (the reference shape) are kept: as good as any, with room for wider schemas.
 * Training throughput rises with the batch (WASM, 2×128: 12k rows/s at 256, 15k at 512, 19k at 1024),
 * while per-epoch progress falls; 512 balanced the two. Validation loss is noisy, hence patience 10.
 */
import { UsageError } from '../../config/errors.js';

export interface VaeHyperParameters {
  /**
   * Widths of the hidden layers: the encoder uses them in order, the decoder reversed. `[]` gives a
   * linear model (used to check against probabilistic PCA).
   * @default [128, 128]
   */
  readonly hidden: readonly number[];
  /** Size of the latent code z. @default 8 */
  readonly latent: number;
  /** Hidden-layer activation. @default 'relu' */
  readonly activation: 'relu' | 'tanh' | 'elu';
  /**
   * Decoder noise of continuous features: one learned log-variance per feature, or one shared by all
   * (the isotropic noise of probabilistic PCA).
   * @default 'per-feature'
   */
  readonly continuousVariance: 'per-feature' | 'shared';
  /** Maximum passes over the training rows (early stopping usually ends training sooner). @default 100 */
  readonly epochs: number;
  /** Most rows per minibatch; see `effectiveBatchSize` for small data sets. @default 512 */
  readonly batchSize: number;
  /** Adam learning rate. @default 0.002 */
  readonly learningRate: number;
  /** Final weight of the KL term (β-VAE); 0 trains a deterministic autoencoder when `sampleLatent` is false. @default 1 */
  readonly beta: number;
  /** Epochs over which β rises linearly from 0 to `beta` (KL warm-up). @default 10 */
  readonly warmupEpochs: number;
  /**
   * How minibatches weight classes: class c is drawn with probability ∝ count_c^classTempering.
   * 0 = every class equally often (balanced), 1 = natural frequencies.
   * @default 0
   */
  readonly classTempering: number;
  /** Share of each class held out for validation and early stopping. @default 0.1 */
  readonly validationFraction: number;
  /** Epochs without a better validation loss before training stops (best weights are kept). @default 10 */
  readonly patience: number;
  /**
   * Train with the reparameterised sample z = mu + sigma·ε (a VAE). False feeds z = mu to the
   * decoder: with beta 0 this is a plain deterministic autoencoder, for comparisons.
   * @default true
   */
  readonly sampleLatent: boolean;
  /** Seed of weight initialisation, splits and minibatches. @default 1 */
  readonly seed: number;
}

export const DEFAULT_HYPER_PARAMETERS: VaeHyperParameters = {
  hidden: [128, 128],
  latent: 8,
  activation: 'relu',
  continuousVariance: 'per-feature',
  epochs: 100,
  batchSize: 512,
  learningRate: 0.002,
  beta: 1,
  warmupEpochs: 10,
  classTempering: 0,
  validationFraction: 0.1,
  patience: 10,
  sampleLatent: true,
  seed: 1,
};

/** Fills in defaults and rejects values training cannot use, naming the field and the fix. */
export function resolveHyperParameters(overrides: Partial<VaeHyperParameters> = {}): VaeHyperParameters {
  const resolved = { ...DEFAULT_HYPER_PARAMETERS, ...withoutUndefined(overrides) };
  const positiveInteger = (field: keyof VaeHyperParameters, value: number) => {
    if (!Number.isInteger(value) || value < 1) {
      throw new UsageError(`hyper-parameter ${field} must be a whole number ≥ 1, got ${value}`);
    }
  };
  const inRange = (field: keyof VaeHyperParameters, value: number, low: number, high: number) => {
    if (!(value >= low && value <= high)) {
      throw new UsageError(`hyper-parameter ${field} must be between ${low} and ${high}, got ${value}`);
    }
  };
  resolved.hidden.forEach((width) => positiveInteger('hidden', width));
  positiveInteger('latent', resolved.latent);
  positiveInteger('epochs', resolved.epochs);
  positiveInteger('batchSize', resolved.batchSize);
  positiveInteger('patience', resolved.patience);
  inRange('learningRate', resolved.learningRate, Number.MIN_VALUE, 1);
  inRange('beta', resolved.beta, 0, 1000);
  inRange('warmupEpochs', resolved.warmupEpochs, 0, 1e6);
  inRange('classTempering', resolved.classTempering, 0, 1);
  inRange('validationFraction', resolved.validationFraction, 0, 0.9);
  if (!Number.isSafeInteger(resolved.seed)) {
    throw new UsageError(`hyper-parameter seed must be a whole number, got ${resolved.seed}`);
  }
  return resolved;
}

function withoutUndefined<T extends object>(value: T): Partial<T> {
  return Object.fromEntries(Object.entries(value).filter(([, v]) => v !== undefined)) as Partial<T>;
}

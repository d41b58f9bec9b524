/**
 * The conditional VAE's weights and forward passes, as plain tf.Variables (no layers API) so that
 * initialisation comes from our seeded PRNG and a snapshot of the weights is a list of Float32Arrays.
 *
 * encoder: [x, onehot(y)] → hidden… → (mu, log sigma²)
 * decoder: [z, onehot(y)] → hidden reversed… → one output per feature (continuous means, categorical
 *          logits, presence logits; see likelihood.ts) + learned continuous log-variances.
 */
import * as tf from '@tensorflow/tfjs';
import { createPrng, type Prng, type Seed } from '../random.js';
import type { VaeHyperParameters } from './hyperparameters.js';

/** Layer sizes: enough to rebuild the network before loading its weights. */
export interface VaeTopology {
  readonly featureWidth: number;
  readonly classCount: number;
  readonly latent: number;
  readonly hidden: readonly number[];
  readonly activation: VaeHyperParameters['activation'];
  /** Number of learned continuous log-variances: one per continuous feature, or 1 when shared. */
  readonly logVarianceCount: number;
}

/** A weight's name, shape and values, in the fixed order of `ConditionalVae.weightNames`. */
export interface NamedWeight {
  readonly name: string;
  readonly shape: readonly number[];
  readonly values: Float32Array;
}

/** Keeps encoder variances in a range where exp() neither overflows nor underflows to 0. */
const LOG_VARIANCE_LIMIT = 12;

interface Dense {
  readonly kernel: tf.Variable;
  readonly bias: tf.Variable;
}

export class ConditionalVae {
  readonly topology: VaeTopology;
  private readonly encoderLayers: Dense[];
  private readonly encoderMu: Dense;
  private readonly encoderLogVariance: Dense;
  private readonly decoderLayers: Dense[];
  private readonly decoderHead: Dense;
  /** Decoder log-variance of continuous features, a free variable (not a function of z). */
  readonly continuousLogVariance: tf.Variable;
  private readonly ordered: { name: string; variable: tf.Variable }[] = [];

  /** Builds the network with Glorot-uniform kernels drawn from `seed` and zero biases. */
  constructor(topology: VaeTopology, seed: Seed) {
    this.topology = topology;
    const prng = createPrng(seed);
    const { featureWidth, classCount, latent, hidden } = topology;
    let width = featureWidth + classCount;
    this.encoderLayers = hidden.map((size, index) => {
      const layer = this.dense(`encoder/hidden${index}`, width, size, prng);
      width = size;
      return layer;
    });
    this.encoderMu = this.dense('encoder/mu', width, latent, prng);
    this.encoderLogVariance = this.dense('encoder/logvar', width, latent, prng);
    width = latent + classCount;
    this.decoderLayers = [...hidden].reverse().map((size, index) => {
      const layer = this.dense(`decoder/hidden${index}`, width, size, prng);
      width = size;
      return layer;
    });
    this.decoderHead = this.dense('decoder/output', width, featureWidth, prng);
    this.continuousLogVariance = this.register('decoder/continuous_logvar', tf.zeros([topology.logVarianceCount]));
  }

  /** Names of all weights in their fixed order. */
  get weightNames(): string[] {
    return this.ordered.map((entry) => entry.name);
  }

  /** All trainable variables, in the fixed order. */
  get variables(): tf.Variable[] {
    return this.ordered.map((entry) => entry.variable);
  }

  /** q(z | x, y): mean and log-variance, each [rows, latent]. */
  encode(features: tf.Tensor2D, classOneHot: tf.Tensor2D): { mu: tf.Tensor2D; logVariance: tf.Tensor2D } {
    return tf.tidy(() => {
      let hidden: tf.Tensor2D = tf.concat([features, classOneHot], 1);
      for (const layer of this.encoderLayers) hidden = this.activate(applyDense(layer, hidden));
      const mu = applyDense(this.encoderMu, hidden);
      // A smooth clip, L·tanh(v/L): about the identity in the useful range, and keeps its gradient.
      const raw = applyDense(this.encoderLogVariance, hidden);
      const logVariance = tf.mul(LOG_VARIANCE_LIMIT, tf.tanh(tf.div(raw, LOG_VARIANCE_LIMIT))) as tf.Tensor2D;
      return { mu, logVariance };
    });
  }

  /** p(x | z, y): one raw output per feature, [rows, featureWidth]; likelihood.ts reads it per block. */
  decode(latent: tf.Tensor2D, classOneHot: tf.Tensor2D): tf.Tensor2D {
    return tf.tidy(() => {
      let hidden: tf.Tensor2D = tf.concat([latent, classOneHot], 1);
      for (const layer of this.decoderLayers) hidden = this.activate(applyDense(layer, hidden));
      return applyDense(this.decoderHead, hidden);
    });
  }

  /** A copy of every weight (for early stopping and saving). */
  readWeights(): NamedWeight[] {
    return this.ordered.map(({ name, variable }) => ({
      name,
      shape: variable.shape,
      values: Float32Array.from(variable.dataSync() as Float32Array),
    }));
  }

  /** Overwrites every weight; names and shapes must match this topology. */
  writeWeights(weights: readonly NamedWeight[]): void {
    if (weights.length !== this.ordered.length) {
      throw new Error(`expected ${this.ordered.length} weights, got ${weights.length}`);
    }
    this.ordered.forEach(({ name, variable }, index) => {
      const weight = weights[index]!;
      if (weight.name !== name || weight.shape.join('x') !== variable.shape.join('x')) {
        throw new Error(`weight ${index} is ${weight.name} [${weight.shape}], expected ${name} [${variable.shape}]`);
      }
      tf.tidy(() => variable.assign(tf.tensor(weight.values, variable.shape)));
    });
  }

  dispose(): void {
    for (const { variable } of this.ordered) variable.dispose();
    this.ordered.length = 0;
  }

  private activate(tensor: tf.Tensor2D): tf.Tensor2D {
    switch (this.topology.activation) {
      case 'relu':
        return tf.relu(tensor);
      case 'tanh':
        return tf.tanh(tensor);
      case 'elu':
        return tf.elu(tensor);
    }
  }

  private dense(name: string, inputs: number, outputs: number, prng: Prng): Dense {
    // Glorot & Bengio 2010 uniform initialisation: U(−l, l), l = sqrt(6 / (fan_in + fan_out)).
    const limit = Math.sqrt(6 / (inputs + outputs));
    const kernelValues = new Float32Array(inputs * outputs);
    for (let i = 0; i < kernelValues.length; i++) kernelValues[i] = (2 * prng.uniform() - 1) * limit;
    return {
      kernel: this.register(`${name}/kernel`, tf.tensor2d(kernelValues, [inputs, outputs])),
      bias: this.register(`${name}/bias`, tf.zeros([outputs])),
    };
  }

  private register(name: string, initial: tf.Tensor): tf.Variable {
    // tfjs variable names are global: a counter keeps several models in one process apart.
    const variable = tf.variable(initial, true, `${name}#${nextVariableId()}`);
    initial.dispose();
    this.ordered.push({ name, variable });
    return variable;
  }
}

function applyDense(layer: Dense, input: tf.Tensor2D): tf.Tensor2D {
  return denseWithExplicitTransposes(input, layer.kernel as tf.Tensor2D, layer.bias as tf.Tensor1D);
}

/**
 * y = x·W + b with a hand-written gradient that transposes explicitly. The stock matMul gradient
 * passes transpose flags, which the WASM backend runs 8–10× slower than a transpose followed by a
 * plain product (measured: [1024×128]ᵀ·[1024×128] 100 ms with the flag, 9 ms transposed first).
 */
const denseWithExplicitTransposes = tf.customGrad(((input: tf.Tensor2D, kernel: tf.Tensor2D, bias: tf.Tensor1D, save: tf.GradSaveFunc) => {
  save([input, kernel]);
  return {
    value: tf.add(tf.matMul(input, kernel), bias) as tf.Tensor2D,
    gradFunc: (dy: tf.Tensor2D, saved: tf.Tensor[]) => {
      const [savedInput, savedKernel] = saved as [tf.Tensor2D, tf.Tensor2D];
      // Column sums as a product with a row of ones: faster than a sum over axis 0 on WASM.
      const ones = tf.ones([1, dy.shape[0]]) as tf.Tensor2D;
      return [
        tf.matMul(dy, tf.transpose(savedKernel)),
        tf.matMul(tf.transpose(savedInput), dy),
        tf.reshape(tf.matMul(ones, dy), [-1]),
      ];
    },
  };
}) as unknown as Parameters<typeof tf.customGrad>[0]) as unknown as (
  input: tf.Tensor2D,
  kernel: tf.Tensor2D,
  bias: tf.Tensor1D,
) => tf.Tensor2D;

let variableCounter = 0;
function nextVariableId(): number {
  variableCounter += 1;
  return variableCounter;
}

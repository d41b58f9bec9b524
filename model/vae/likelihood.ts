/**
 * The two terms of the negative ELBO, per row:
 *   reconstruction NLL −log p(x | z, y), one likelihood per layout block, and
 *   KL(q(z | x, y) ‖ N(0, I)) in closed form (Kingma & Welling 2014, App. B).
 * A block gated by a presence feature contributes only where that presence is 1 in the data.
 */
import * as tf from '@tensorflow/tfjs';
import { assertValidLayout, type FeatureLayout } from '../features/layout.js';

const LOG_TWO_PI = Math.log(2 * Math.PI);

/**
 * Where each likelihood head reads its columns, as constant masks over the full feature width.
 * Masks and matrix products rather than gathers: the gradient of gather needs a kernel
 * (UnsortedSegmentSum) that the WASM backend lacks.
 */
export interface HeadIndex {
  readonly width: number;
  /** 1 at continuous columns. */
  readonly continuousMask: Float32Array;
  /** [continuous count × width]: row i is 1 at the column of the i-th continuous feature. */
  readonly continuousScatter: Float32Array;
  readonly continuousCount: number;
  /** 1 at presence columns. */
  readonly presenceMask: Float32Array;
  readonly categoricalGroups: readonly { offset: number; width: number; gate: number }[];
  /**
   * [(width + 1) × width]: [x, 1] · gateMatrix gives each column's gate value (its presence
   * feature, or the constant 1 when ungated). Undefined when nothing is gated.
   */
  readonly gateMatrix: Float32Array | undefined;
}

export function headIndexFor(layout: FeatureLayout): HeadIndex {
  assertValidLayout(layout);
  const width = layout.width;
  const continuousMask = new Float32Array(width);
  const presenceMask = new Float32Array(width);
  const continuousColumns: number[] = [];
  const categoricalGroups: { offset: number; width: number; gate: number }[] = [];
  const gateOf = new Int32Array(width).fill(width);
  let anyGated = false;
  for (const block of layout.blocks) {
    if (block.kind === 'presence') {
      presenceMask[block.offset] = 1;
      continue;
    }
    const gate = block.gatedBy ?? width;
    if (block.gatedBy !== undefined) anyGated = true;
    gateOf.fill(gate, block.offset, block.offset + block.width);
    if (block.kind === 'continuous') {
      continuousMask[block.offset] = 1;
      continuousColumns.push(block.offset);
    } else {
      categoricalGroups.push({ offset: block.offset, width: block.width, gate });
    }
  }
  const continuousScatter = new Float32Array(continuousColumns.length * width);
  continuousColumns.forEach((column, i) => {
    continuousScatter[i * width + column] = 1;
  });
  let gateMatrix: Float32Array | undefined;
  if (anyGated) {
    gateMatrix = new Float32Array((width + 1) * width);
    gateOf.forEach((gate, column) => {
      gateMatrix![gate * width + column] = 1;
    });
  }
  return {
    width,
    continuousMask,
    continuousScatter,
    continuousCount: continuousColumns.length,
    presenceMask,
    categoricalGroups,
    gateMatrix,
  };
}

/**
 * KL(N(mu, exp(logVariance)) ‖ N(0, I)) per row = ½ Σ_j (mu_j² + sigma_j² − 1 − log sigma_j²)
 * (Kingma & Welling 2014, App. B).
 */
export function klPerRow(mu: tf.Tensor2D, logVariance: tf.Tensor2D): tf.Tensor1D {
  return tf.tidy(() =>
    tf.mul(0.5, tf.sum(tf.sub(tf.add(tf.square(mu), tf.exp(logVariance)), tf.add(1, logVariance)), 1)),
  );
}

/**
 * −log p(x | decoded) per row: Gaussian NLL with the learned log-variance for continuous columns,
 * softmax cross-entropy per categorical group, sigmoid cross-entropy per presence column.
 * `continuousLogVariance` has one entry per continuous column, or a single shared entry.
 */
export function reconstructionNllPerRow(
  features: tf.Tensor2D,
  decoded: tf.Tensor2D,
  continuousLogVariance: tf.Tensor1D,
  heads: HeadIndex,
): tf.Tensor1D {
  return tf.tidy(() => {
    const rows = features.shape[0];
    const width = heads.width;
    // Per-column weight: the gate's value in the data (1 when ungated).
    const gates =
      heads.gateMatrix === undefined
        ? undefined
        : tf.matMul(tf.concat([features, tf.ones([rows, 1])], 1), tf.tensor2d(heads.gateMatrix, [width + 1, width]));
    const perColumn: tf.Tensor2D[] = [];
    if (heads.continuousCount > 0) {
      const mask = tf.tensor1d(heads.continuousMask);
      // Spread the learned log-variances onto their columns (0 elsewhere, masked out below).
      const logVariance =
        continuousLogVariance.size === 1
          ? tf.mul(continuousLogVariance, mask)
          : tf.matMul(tf.reshape(continuousLogVariance, [1, -1]), tf.tensor2d(heads.continuousScatter, [heads.continuousCount, width]));
      const squaredError = tf.mul(tf.square(tf.sub(features, decoded)), tf.exp(tf.neg(logVariance)));
      const nll = tf.mul(0.5, tf.add(tf.add(squaredError, logVariance), LOG_TWO_PI));
      perColumn.push(tf.mul(nll, mask) as tf.Tensor2D);
    }
    if (heads.presenceMask.some((value) => value === 1)) {
      // Stable binary cross-entropy with logits: max(l, 0) − l·t + log(1 + exp(−|l|)).
      const bce = tf.add(tf.sub(tf.relu(decoded), tf.mul(decoded, features)), tf.log1p(tf.exp(tf.neg(tf.abs(decoded)))));
      perColumn.push(tf.mul(bce, tf.tensor1d(heads.presenceMask)) as tf.Tensor2D);
    }
    const terms: tf.Tensor1D[] = [];
    if (perColumn.length > 0) {
      const summed = perColumn.length === 1 ? perColumn[0]! : tf.add(perColumn[0]!, perColumn[1]!);
      terms.push(tf.sum(gates === undefined ? summed : tf.mul(summed, gates), 1) as tf.Tensor1D);
    }
    for (const group of heads.categoricalGroups) {
      const target = tf.slice(features, [0, group.offset], [-1, group.width]);
      const logits = tf.slice(decoded, [0, group.offset], [-1, group.width]);
      let crossEntropy = tf.neg(tf.sum(tf.mul(target, tf.logSoftmax(logits)), 1)) as tf.Tensor1D;
      if (group.gate !== width) {
        const present = tf.reshape(tf.slice(features, [0, group.gate], [-1, 1]), [-1]);
        crossEntropy = tf.mul(crossEntropy, present) as tf.Tensor1D;
      }
      terms.push(crossEntropy);
    }
    if (terms.length === 0) return tf.zeros([rows]) as tf.Tensor1D;
    return terms.length === 1 ? terms[0]! : (tf.addN(terms) as tf.Tensor1D);
  });
}

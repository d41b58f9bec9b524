/**
 * Batched forward passes over many rows, cut into chunks of the backend's sweet-spot size (WASM
 * throughput collapses for very large passes; see backend.ts), with results copied out to JS.
 */
import * as tf from '@tensorflow/tfjs';
import { inferenceChunkRows } from './backend.js';
import { klPerRow, reconstructionNllPerRow, type HeadIndex } from './likelihood.js';
import type { ConditionalVae } from './network.js';

/** Row-major features with one-hot classes. */
export interface RowBlock {
  readonly rows: number;
  readonly features: Float32Array;
  readonly classOneHot: Float32Array;
}

/** q(z | x, y) for every row: mu and log-variance, row-major [rows × latent]. */
export function encodeRows(network: ConditionalVae, block: RowBlock): { mu: Float32Array; logVariance: Float32Array } {
  const { featureWidth, classCount, latent } = network.topology;
  const mu = new Float32Array(block.rows * latent);
  const logVariance = new Float32Array(block.rows * latent);
  forEachChunk(block.rows, (start, count) => {
    tf.tidy(() => {
      const features = tf.tensor2d(block.features.subarray(start * featureWidth, (start + count) * featureWidth), [count, featureWidth]);
      const classOneHot = tf.tensor2d(block.classOneHot.subarray(start * classCount, (start + count) * classCount), [count, classCount]);
      const encoded = network.encode(features, classOneHot);
      mu.set(encoded.mu.dataSync() as Float32Array, start * latent);
      logVariance.set(encoded.logVariance.dataSync() as Float32Array, start * latent);
    });
  });
  return { mu, logVariance };
}

/** Decoder outputs (means and logits) for latent points, row-major [rows × featureWidth]. */
export function decodeRows(network: ConditionalVae, latentValues: Float32Array, classOneHotValues: Float32Array): Float32Array {
  const { featureWidth, classCount, latent } = network.topology;
  const rows = latentValues.length / latent;
  const decoded = new Float32Array(rows * featureWidth);
  forEachChunk(rows, (start, count) => {
    tf.tidy(() => {
      const z = tf.tensor2d(latentValues.subarray(start * latent, (start + count) * latent), [count, latent]);
      const classOneHot = tf.tensor2d(classOneHotValues.subarray(start * classCount, (start + count) * classCount), [count, classCount]);
      decoded.set(network.decode(z, classOneHot).dataSync() as Float32Array, start * featureWidth);
    });
  });
  return decoded;
}

/**
 * −ELBO per row with z = mu: reconstruction NLL + beta·KL. A deterministic score (no ε), used for
 * validation and as a per-record typicality measure.
 */
export function negativeElboRows(network: ConditionalVae, heads: HeadIndex, block: RowBlock, beta: number): Float32Array {
  const { featureWidth, classCount } = network.topology;
  const result = new Float32Array(block.rows);
  forEachChunk(block.rows, (start, count) => {
    tf.tidy(() => {
      const features = tf.tensor2d(block.features.subarray(start * featureWidth, (start + count) * featureWidth), [count, featureWidth]);
      const classOneHot = tf.tensor2d(block.classOneHot.subarray(start * classCount, (start + count) * classCount), [count, classCount]);
      const { mu, logVariance } = network.encode(features, classOneHot);
      const decoded = network.decode(mu, classOneHot);
      const reconstruction = reconstructionNllPerRow(features, decoded, network.continuousLogVariance as tf.Tensor1D, heads);
      const perRow = tf.add(reconstruction, tf.mul(beta, klPerRow(mu, logVariance)));
      result.set(perRow.dataSync() as Float32Array, start);
    });
  });
  return result;
}

function forEachChunk(rows: number, visit: (start: number, count: number) => void): void {
  const chunk = inferenceChunkRows();
  for (let start = 0; start < rows; start += chunk) visit(start, Math.min(chunk, rows - start));
}

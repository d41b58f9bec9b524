/**
 * Synthetic variants of records drawn from the posterior around each one:
 *   encode every row once → (mu, sigma); z_i = mu + τ·sigma·ε_i; decode every z in batched passes;
 *   then draw x_i from the decoder's likelihood p(x | z_i, y).
 * Decoding only the mean collapses the dimensions z does not explain (see DESIGN.md), so the
 * likelihood is sampled.
 *
 * Temperature τ scales all noise alike: the latent step, the continuous noise (mean + τ·sigma_x·ε'),
 * and the categorical and presence draws, which use logits/τ. τ = 1 samples the model as trained;
 * τ → 0 tends to `reconstruct` (z = mu, Gaussian means, argmax categories, presence iff p ≥ ½).
 *
 * Every draw of sample i of a row comes from `streamFor(seed, modelId, key, i)`, in a fixed order:
 * `latent` normals for ε, then one draw per layout block in offset order (a normal for continuous,
 * a uniform for categorical and presence), each drawn whether or not a gate later blanks the block.
 * So a sample depends only on its own key and index, never on its batch neighbours.
 */
import type { FeatureLayout } from '../features/layout.js';
import { recordStreams, type Prng, type RecordKey, type Seed } from '../random.js';
import { UsageError } from '../../config/errors.js';
import { decodeRows, encodeRows, negativeElboRows, type RowBlock } from './inference.js';
import { headIndexFor } from './likelihood.js';
import type { ConditionalVae } from './network.js';

/** What sampling needs of a model. `id` keys the random streams. */
export interface SamplingModel {
  readonly id: string;
  readonly network: ConditionalVae;
  readonly layout: FeatureLayout;
}

/** A record as features, with its class and its provenance key. */
export interface SourceRow {
  readonly features: Float32Array;
  readonly classIndex: number;
  readonly key: RecordKey;
  /** Number of variants to draw (may be 0). */
  readonly k: number;
  /** Index of the first variant; lets a caller regenerate variant i alone. @default 0 */
  readonly firstSampleIndex?: number;
}

export interface SamplingOptions {
  /** τ ≥ 0; see the file comment. */
  readonly temperature: number;
  readonly seed: Seed;
}

export interface PosteriorSample {
  readonly sampleIndex: number;
  readonly features: Float32Array;
}

/** Draws `row.k` variants of every row; result[r] holds row r's variants in sample-index order. */
export function samplePosterior(model: SamplingModel, rows: readonly SourceRow[], options: SamplingOptions): PosteriorSample[][] {
  const { temperature, seed } = options;
  if (!(temperature >= 0) || !Number.isFinite(temperature)) {
    throw new UsageError(`temperature must be a finite number ≥ 0, got ${temperature}`);
  }
  const { network, layout } = model;
  const { latent, classCount } = network.topology;
  const active = rows.map((row, index) => ({ row, index })).filter(({ row }) => {
    if (!Number.isInteger(row.k) || row.k < 0) throw new UsageError(`k must be a whole number ≥ 0, got ${row.k}`);
    return row.k > 0;
  });
  const result: PosteriorSample[][] = rows.map(() => []);
  if (active.length === 0) return result;

  const encoded = encodeRows(network, toRowBlock(active.map(({ row }) => row), layout.width, classCount));
  const total = active.reduce((sum, { row }) => sum + row.k, 0);
  const latentValues = new Float32Array(total * latent);
  const classOneHot = new Float32Array(total * classCount);
  const streams: Prng[] = [];
  let sample = 0;
  active.forEach(({ row }, activeIndex) => {
    const first = row.firstSampleIndex ?? 0;
    const rowStreams = recordStreams(seed, model.id, row.key);
    for (let i = 0; i < row.k; i++, sample++) {
      const stream = rowStreams.sample(first + i);
      for (let j = 0; j < latent; j++) {
        const at = activeIndex * latent + j;
        const sigma = Math.exp(0.5 * encoded.logVariance[at]!);
        latentValues[sample * latent + j] = encoded.mu[at]! + temperature * sigma * stream.normal();
      }
      classOneHot[sample * classCount + row.classIndex] = 1;
      streams.push(stream);
    }
  });

  const decoded = decodeRows(network, latentValues, classOneHot);
  const draw = likelihoodDrawer(model, temperature);
  sample = 0;
  for (const { row, index } of active) {
    const first = row.firstSampleIndex ?? 0;
    for (let i = 0; i < row.k; i++, sample++) {
      const outputs = decoded.subarray(sample * layout.width, (sample + 1) * layout.width);
      result[index]!.push({ sampleIndex: first + i, features: draw(outputs, streams[sample]!) });
    }
  }
  return result;
}

/** The τ = 0 decode of each row: z = mu, Gaussian means, argmax categories, presence iff p ≥ ½. */
export function reconstruct(model: Omit<SamplingModel, 'id'>, rows: readonly Pick<SourceRow, 'features' | 'classIndex'>[]): Float32Array[] {
  const { network, layout } = model;
  const encoded = encodeRows(network, toRowBlock(rows, layout.width, network.topology.classCount));
  const classOneHot = oneHot(rows, network.topology.classCount);
  const decoded = decodeRows(network, encoded.mu, classOneHot);
  const draw = likelihoodDrawer(model, 0);
  return rows.map((_, r) => draw(decoded.subarray(r * layout.width, (r + 1) * layout.width), undefined));
}

/**
 * ELBO of each row (nats; higher = more typical of the training data), evaluated at z = mu so it is
 * deterministic. A fall in its average over live records signals drift.
 */
export function elbo(model: Omit<SamplingModel, 'id'>, rows: readonly Pick<SourceRow, 'features' | 'classIndex'>[]): Float64Array {
  const { network, layout } = model;
  const negative = negativeElboRows(network, headIndexFor(layout), toRowBlock(rows, layout.width, network.topology.classCount), 1);
  return Float64Array.from(negative, (value) => -value);
}

/**
 * Turns decoder outputs into a feature vector valid under the layout. With a stream, draws from the
 * likelihood at temperature τ; without one (τ = 0), takes its mode-like value.
 */
function likelihoodDrawer(
  model: Omit<SamplingModel, 'id'>,
  temperature: number,
): (outputs: Float32Array, stream: Prng | undefined) => Float32Array {
  const { layout, network } = model;
  const logVariances = network.continuousLogVariance.dataSync() as Float32Array;
  const continuousSigma = Float64Array.from(logVariances, (value) => Math.exp(0.5 * value));
  const deterministic = temperature === 0;
  return (outputs, stream) => {
    const features = new Float32Array(layout.width);
    let continuousIndex = 0;
    for (const block of layout.blocks) {
      const at = block.offset;
      if (block.kind === 'continuous') {
        const sigma = continuousSigma[Math.min(continuousIndex, continuousSigma.length - 1)]!;
        continuousIndex++;
        const noise = stream === undefined ? 0 : stream.normal();
        features[at] = deterministic ? outputs[at]! : outputs[at]! + temperature * sigma * noise;
      } else if (block.kind === 'categorical') {
        const u = stream === undefined ? 0 : stream.uniform();
        features[at + drawCategory(outputs, at, block.width, temperature, u)] = 1;
      } else {
        const u = stream === undefined ? 0 : stream.uniform();
        const probability = deterministic ? (outputs[at]! >= 0 ? 1 : 0) : sigmoid(outputs[at]! / temperature);
        features[at] = deterministic ? probability : u < probability ? 1 : 0;
      }
    }
    // A field drawn as null carries no value: blank the blocks it gates.
    for (const block of layout.blocks) {
      if (block.kind !== 'presence' && block.gatedBy !== undefined && features[block.gatedBy] === 0) {
        features.fill(0, block.offset, block.offset + block.width);
      }
    }
    return features;
  };
}

/** Index within a categorical group: argmax when τ = 0, else inverse-CDF of softmax(logits/τ) at u. */
function drawCategory(outputs: Float32Array, offset: number, width: number, temperature: number, u: number): number {
  let best = 0;
  for (let c = 1; c < width; c++) if (outputs[offset + c]! > outputs[offset + best]!) best = c;
  if (temperature === 0) return best;
  const top = outputs[offset + best]! / temperature;
  let total = 0;
  for (let c = 0; c < width; c++) total += Math.exp(outputs[offset + c]! / temperature - top);
  let target = u * total;
  for (let c = 0; c < width; c++) {
    target -= Math.exp(outputs[offset + c]! / temperature - top);
    if (target < 0) return c;
  }
  return best;
}

function sigmoid(x: number): number {
  return x >= 0 ? 1 / (1 + Math.exp(-x)) : Math.exp(x) / (1 + Math.exp(x));
}

function toRowBlock(rows: readonly Pick<SourceRow, 'features' | 'classIndex'>[], width: number, classCount: number): RowBlock {
  const features = new Float32Array(rows.length * width);
  rows.forEach((row, r) => {
    if (row.features.length !== width) {
      throw new UsageError(`row ${r} has ${row.features.length} features; the model expects ${width}`);
    }
    if (!(row.classIndex >= 0 && row.classIndex < classCount && Number.isInteger(row.classIndex))) {
      throw new UsageError(`row ${r} has class index ${row.classIndex}; the model knows classes 0…${classCount - 1}`);
    }
    features.set(row.features, r * width);
  });
  return { rows: rows.length, features, classOneHot: oneHot(rows, classCount) };
}

function oneHot(rows: readonly Pick<SourceRow, 'classIndex'>[], classCount: number): Float32Array {
  const values = new Float32Array(rows.length * classCount);
  rows.forEach((row, r) => {
    values[r * classCount + row.classIndex] = 1;
  });
  return values;
}

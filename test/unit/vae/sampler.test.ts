import * as tf from '@tensorflow/tfjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createPrng } from '../../../model/random.js';
import { elbo, reconstruct, samplePosterior, type SamplingModel, type SourceRow } from '../../../model/vae/sampler.js';
import { trainVae, type TrainedVae } from '../../../model/vae/train.js';
import { distance, MIXED_LAYOUT, mixedData } from './support.js';

const data = mixedData(2000, 0.1, createPrng(21));
const width = MIXED_LAYOUT.width;
let trained: TrainedVae;
let model: SamplingModel;

beforeAll(async () => {
  trained = await trainVae(MIXED_LAYOUT, data, { hidden: [32, 32], latent: 4, epochs: 15, batchSize: 128, warmupEpochs: 5, seed: 3 });
  model = { id: 'sampler-test-model', network: trained.network, layout: MIXED_LAYOUT };
});

afterAll(() => {
  trained?.network.dispose();
});

/** The first `count` storm rows as sampling sources. */
function stormRows(count: number, k: number): SourceRow[] {
  const rows: SourceRow[] = [];
  for (let r = 0; r < data.classes.length && rows.length < count; r++) {
    if (data.classes[r] !== 1) continue;
    rows.push({
      features: data.features.slice(r * width, (r + 1) * width),
      classIndex: 1,
      key: { topic: 'harbour.sensors', partition: 0, offset: r },
      k,
    });
  }
  return rows;
}

function meanDistance(pairs: [Float32Array, Float32Array][]): number {
  return pairs.reduce((sum, [a, b]) => sum + distance(a, b), 0) / pairs.length;
}

describe('samplePosterior', () => {
  it('draws different variants from one posterior', () => {
    const [variants] = samplePosterior(model, stormRows(1, 2), { temperature: 1, seed: 5 });
    expect(variants).toHaveLength(2);
    expect(distance(variants![0]!.features, variants![1]!.features)).toBeGreaterThan(0.01);
  });

  it('produces vectors valid under the layout: one-hot groups, 0/1 presence, blank gated values', () => {
    const results = samplePosterior(model, stormRows(20, 10), { temperature: 1.5, seed: 6 });
    let absentGusts = 0;
    for (const sample of results.flat()) {
      const f = sample.features;
      expect(f.every(Number.isFinite)).toBe(true);
      expect([f[3], f[4], f[5]].filter((value) => value === 1)).toHaveLength(1);
      expect(f[3]! + f[4]! + f[5]!).toBe(1);
      expect([0, 1]).toContain(f[6]);
      if (f[6] === 0) {
        absentGusts++;
        expect(f[7]).toBe(0);
      }
    }
    expect(absentGusts).toBeGreaterThan(0);
  });

  it('returns k variants per row (k may differ per row and be 0), indexed from firstSampleIndex', () => {
    const [a, b, c] = stormRows(3, 1);
    const results = samplePosterior(model, [{ ...a!, k: 3 }, { ...b!, k: 0 }, { ...c!, k: 2, firstSampleIndex: 7 }], {
      temperature: 1,
      seed: 1,
    });
    expect(results.map((variants) => variants.map((v) => v.sampleIndex))).toEqual([[0, 1, 2], [], [7, 8]]);
  });

  it('repeats exactly for the same inputs and depends only on (seed, model id, key, index)', () => {
    const rows = stormRows(8, 4);
    const options = { temperature: 1, seed: 77 };
    const first = samplePosterior(model, rows, options);
    expect(samplePosterior(model, rows, options)).toEqual(first);
    // The same record alone, or regenerated from one provenance index, gives the same variant.
    const [alone] = samplePosterior(model, [rows[5]!], options);
    expect(alone).toEqual(first[5]);
    const [regenerated] = samplePosterior(model, [{ ...rows[5]!, k: 1, firstSampleIndex: 2 }], options);
    expect(regenerated![0]).toEqual(first[5]![2]);
    // Another seed, or another model id, draws other variants.
    expect(samplePosterior(model, rows, { ...options, seed: 78 })).not.toEqual(first);
    expect(samplePosterior({ ...model, id: 'another-model' }, rows, options)).not.toEqual(first);
  });

  it('approaches the reconstruction as τ → 0 (common practice)', () => {
    const rows = stormRows(20, 5);
    const reconstructions = reconstruct(model, rows);
    const gaps = [1, 0.3, 0.1, 0.01, 0.001].map((temperature) => {
      const results = samplePosterior(model, rows, { temperature, seed: 9 });
      return meanDistance(results.flatMap((variants, r) => variants.map((v) => [v.features, reconstructions[r]!] as [Float32Array, Float32Array])));
    });
    for (let i = 1; i < gaps.length; i++) expect(gaps[i]).toBeLessThan(gaps[i - 1]!);
    expect(gaps[gaps.length - 1]).toBeLessThan(0.01);
  });

  it('moves further from the source as τ grows (common practice)', () => {
    const rows = stormRows(30, 10);
    const distances = [0.25, 0.5, 1, 1.5].map((temperature) => {
      const results = samplePosterior(model, rows, { temperature, seed: 10 });
      return meanDistance(results.flatMap((variants, r) => variants.map((v) => [v.features, rows[r]!.features] as [Float32Array, Float32Array])));
    });
    for (let i = 1; i < distances.length; i++) expect(distances[i]).toBeGreaterThan(distances[i - 1]!);
  });

  it('leaves no tensors behind', () => {
    const rows = stormRows(10, 3);
    samplePosterior(model, rows, { temperature: 1, seed: 1 });
    const before = tf.memory().numTensors;
    samplePosterior(model, rows, { temperature: 1, seed: 2 });
    reconstruct(model, rows);
    elbo(model, rows);
    expect(tf.memory().numTensors).toBe(before);
  });
});

describe('elbo', () => {
  it('scores typical records above implausible ones', () => {
    const rows = stormRows(20, 0);
    const typical = elbo(model, rows);
    const implausible = elbo(
      model,
      rows.map((row) => ({ ...row, features: row.features.map((value, j) => (j < 3 ? value * 6 + 4 : value)) })),
    );
    expect(typical.every(Number.isFinite)).toBe(true);
    const mean = (values: Float64Array) => values.reduce((sum, value) => sum + value, 0) / values.length;
    expect(mean(typical)).toBeGreaterThan(mean(implausible) + 10);
  });
});

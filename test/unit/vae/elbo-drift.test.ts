import * as tf from '@tensorflow/tfjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import { buildDriftReference, heldOutRows, quantileOfSorted, readDriftReference, referenceFromScores, type DriftReference } from '../../../model/drift/reference.js';
import { negativeElboScores } from '../../../model/drift/score.js';
import { createPrng } from '../../../model/random.js';
import { gatherRows, type TrainingData } from '../../../model/vae/dataset.js';
import { encodeRows, decodeRows } from '../../../model/vae/inference.js';
import { headIndexFor, reconstructionNllPerRow } from '../../../model/vae/likelihood.js';
import { trainVae, type TrainedVae } from '../../../model/vae/train.js';
import { MIXED_LAYOUT, mixedData } from './support.js';

// Setup: a small conditional VAE fitted on 3,000 invented harbour-sensor rows (support.ts, 10 % storms).
// In-distribution batch: 2,000 fresh rows from the same generator (another seed). Shifted batch: the
// same rows after a water-temperature sensor drifts by +2.0 (its within-class sd is 0.3; this small
// model's decoder sd for it is about 0.6, so the shift is about 3 of the model's own sd). Measured on
// this setup: exceedance 0.011 in distribution; 0.05 / 0.79 / 1.0 for shifts of +1 / +2 / +3.
const data = mixedData(3000, 0.1, createPrng(41));
const fresh = mixedData(2000, 0.1, createPrng(42));
const WATER_TEMP = 2;
let trained: TrainedVae;
let reference: DriftReference;

function scoresOf(rows: TrainingData): Float64Array {
  return negativeElboScores(trained, rows.features, rows.classes);
}

function exceedance(scores: Float64Array, threshold: number): number {
  return scores.filter((score) => score > threshold).length / scores.length;
}

beforeAll(async () => {
  trained = await trainVae(MIXED_LAYOUT, data, { hidden: [16, 16], latent: 3, batchSize: 100, warmupEpochs: 4, epochs: 20, patience: 100, seed: 5 });
  reference = buildDriftReference(trained, data);
}, 120_000);

afterAll(() => trained?.network.dispose());

describe('drift reference', () => {
  it('is built from the rows training held out, scored as the validation loss training recorded', () => {
    const held = heldOutRows(data, trained.hyperParameters);
    expect(reference).toMatchObject({ rows: 'held-out', count: held.length });
    expect(held.length).toBe(Math.floor(data.classes.filter((c) => c === 0).length * 0.1) + Math.floor(data.classes.filter((c) => c === 1).length * 0.1));
    // train.ts scores its validation rows with β = hp.beta (1 here, the drift score's β) and weighs each
    // class equally (classTempering 0): the same split gives the same number.
    const { features } = gatherRows(data, held);
    const scores = negativeElboScores(trained, features, held.map((row) => data.classes[row]!));
    const perClass = [0, 1].map((label) => {
      const mine = held.map((row, i) => (data.classes[row] === label ? scores[i]! : Number.NaN)).filter((score) => !Number.isNaN(score));
      return mine.reduce((sum, score) => sum + score, 0) / mine.length;
    });
    const recorded = trained.curve[trained.bestEpoch - 1]!.validationLoss!;
    expect((perClass[0]! + perClass[1]!) / 2).toBeCloseTo(recorded, 3);
    const sorted = Float64Array.from(scores).sort();
    expect(reference.p99).toBe(quantileOfSorted(sorted, 0.99));
    expect(reference.p50).toBeLessThan(reference.p90);
    expect(reference.p90).toBeLessThan(reference.p99);
  });

  it('is exceeded by about 1 % of in-distribution records and by most records after a sensor shift', () => {
    const inDistribution = exceedance(scoresOf(fresh), reference.p99);
    const shiftedFeatures = fresh.features.slice();
    for (let row = 0; row < fresh.classes.length; row++) shiftedFeatures[row * MIXED_LAYOUT.width + WATER_TEMP]! += 2.0;
    const shifted = exceedance(scoresOf({ ...fresh, features: shiftedFeatures }), reference.p99);
    // Expected ≈ 0.01; the p99 comes from ~300 held-out rows, so its own exceedance varies by about
    // ±0.006 (binomial sd sqrt(0.01·0.99/300)) [calc]: allow up to 0.04.
    expect(inDistribution).toBeLessThan(0.04);
    expect(shifted).toBeGreaterThan(0.5);
    expect(shifted).toBeGreaterThan(10 * Math.max(inDistribution, 0.01));
  });
});

describe('negativeElboScores', () => {
  const rows = mixedData(40, 0.5, createPrng(43));

  it('is deterministic, and a row scores the same alone as in a batch', () => {
    const first = scoresOf(rows);
    expect(scoresOf(rows)).toEqual(first);
    const alone = negativeElboScores(trained, rows.features.slice(3 * MIXED_LAYOUT.width, 4 * MIXED_LAYOUT.width), [rows.classes[3]!]);
    expect(alone[0]).toBeCloseTo(first[3]!, 4);
  });

  it('is the reconstruction NLL at z = mu plus the closed-form KL of diagonal Gaussians', () => {
    // KL(N(mu, sigma²) ‖ N(0, I)) = ½ Σ_j (mu_j² + sigma_j² − 1 − log sigma_j²) (Kingma & Welling 2014,
    // App. B), written out here in plain JS from the encoder's outputs; klPerRow itself is checked
    // against the handbook table in kl.test.ts.
    const classOneHot = new Float32Array(rows.classes.length * 2);
    rows.classes.forEach((label, row) => (classOneHot[row * 2 + label] = 1));
    const { mu, logVariance } = encodeRows(trained.network, { rows: rows.classes.length, features: rows.features, classOneHot });
    const decoded = decodeRows(trained.network, mu, classOneHot);
    const reconstruction = tf.tidy(
      () =>
        reconstructionNllPerRow(
          tf.tensor2d(rows.features, [rows.classes.length, MIXED_LAYOUT.width]),
          tf.tensor2d(decoded, [rows.classes.length, MIXED_LAYOUT.width]),
          trained.network.continuousLogVariance as tf.Tensor1D,
          headIndexFor(MIXED_LAYOUT),
        ).dataSync() as Float32Array,
    );
    const latent = trained.network.topology.latent;
    const scores = scoresOf(rows);
    for (let row = 0; row < rows.classes.length; row++) {
      let kl = 0;
      for (let j = 0; j < latent; j++) {
        const m = mu[row * latent + j]!;
        const lv = logVariance[row * latent + j]!;
        kl += 0.5 * (m * m + Math.exp(lv) - 1 - lv);
      }
      expect(scores[row]).toBeCloseTo(reconstruction[row]! + kl, 3);
    }
  });

  it('refuses rows that do not fit the model, naming the problem', () => {
    expect(() => negativeElboScores(trained, new Float32Array(7), [0])).toThrow(/7 features for 1 rows of width 8/);
    expect(() => negativeElboScores(trained, new Float32Array(8), [2])).toThrow(/class index 2/);
  });
});

describe('quantiles and the stored reference', () => {
  it('takes quantiles by linear interpolation between order statistics', () => {
    // Hyndman & Fan 1996 definition 7 (R's and NumPy's default) [calc]: 1…100 → p99 = 99.01;
    // 1…10 → p90 = 9.1, p50 = 5.5.
    const hundred = Float64Array.from({ length: 100 }, (_, i) => i + 1);
    expect(quantileOfSorted(hundred, 0.99)).toBeCloseTo(99.01, 10);
    const ten = Float64Array.from({ length: 10 }, (_, i) => i + 1);
    expect(quantileOfSorted(ten, 0.9)).toBeCloseTo(9.1, 10);
    expect(referenceFromScores([10, 3, 7, 1, 4, 6, 2, 9, 5, 8], 'fitted')).toEqual({ rows: 'fitted', count: 10, p50: 5.5, p90: quantileOfSorted(ten, 0.9), p99: quantileOfSorted(ten, 0.99) });
  });

  it('reads an absent reference as none and refuses a malformed one', () => {
    expect(readDriftReference({}, '/models/old')).toBeUndefined();
    expect(readDriftReference({ driftReference: reference }, '/models/new')).toEqual(reference);
    const broken = { driftReference: { ...reference, p90: reference.p99 + 1 } };
    const failure: unknown = (() => {
      try {
        return readDriftReference(broken, '/models/edited');
      } catch (error) {
        return error;
      }
    })();
    expect(failure).toBeInstanceOf(RaretideError);
    expect(failure).toMatchObject({ code: 'model.corrupt', message: /\/models\/edited.*driftReference.*Refit/ });
  });
});

import * as tf from '@tensorflow/tfjs';
import { describe, expect, it } from 'vitest';
import { createPrng } from '../../../model/random.js';
import { BalancedBatchSampler, classDrawWeights, stratifiedSplit } from '../../../model/vae/dataset.js';
import { effectiveBatchSize, trainVae, type EpochReport } from '../../../model/vae/train.js';
import { MIXED_LAYOUT, mixedData } from './support.js';

const data = mixedData(1200, 0.05, createPrng(8));
const SMALL = { hidden: [16, 16], latent: 3, batchSize: 100, warmupEpochs: 4 } as const;

describe('trainVae', () => {
  it('gives the same weights for the same seed, other weights for another seed', async () => {
    const first = await trainVae(MIXED_LAYOUT, data, { ...SMALL, epochs: 3, seed: 11 });
    const second = await trainVae(MIXED_LAYOUT, data, { ...SMALL, epochs: 3, seed: 11 });
    const other = await trainVae(MIXED_LAYOUT, data, { ...SMALL, epochs: 3, seed: 12 });
    expect(second.network.readWeights()).toEqual(first.network.readWeights());
    expect(other.network.readWeights()).not.toEqual(first.network.readWeights());
    for (const trained of [first, second, other]) trained.network.dispose();
  });

  it('reports every epoch with a linear KL warm-up, and leaks no tensors', async () => {
    // Leak check as tfjs' own tests do it: tf.memory().numTensors before and after (STYLE.md).
    const baseline = tf.memory().numTensors;
    const reports: EpochReport[] = [];
    const tensorsAtEpoch: number[] = [];
    const trained = await trainVae(
      MIXED_LAYOUT,
      data,
      { ...SMALL, epochs: 6, beta: 2, patience: 100 },
      {
        onEpoch: (report) => {
          reports.push(report);
          tensorsAtEpoch.push(tf.memory().numTensors);
        },
      },
    );
    expect(reports.map((report) => report.epoch)).toEqual([1, 2, 3, 4, 5, 6]);
    expect(reports.map((report) => report.beta)).toEqual([0, 0.5, 1, 1.5, 2, 2]);
    for (const report of reports) {
      expect(report.loss).toBeCloseTo(report.reconstruction + report.beta * report.kl, 4);
      expect(Number.isFinite(report.validationLoss)).toBe(true);
      expect(report.rowsPerSecond).toBeGreaterThan(0);
    }
    expect(reports[5]!.reconstruction).toBeLessThan(reports[0]!.reconstruction);
    // Stable across epochs: only the network's variables (and Adam's slots, freed at the end) remain.
    expect(new Set(tensorsAtEpoch).size).toBe(1);
    expect(tf.memory().numTensors).toBe(baseline + trained.network.variables.length);
    trained.network.dispose();
    expect(tf.memory().numTensors).toBe(baseline);
  });

  it('stops early and keeps the weights of the best validation epoch', async () => {
    const hp = { ...SMALL, epochs: 200, patience: 3, learningRate: 0.02, seed: 4 };
    const stopped = await trainVae(MIXED_LAYOUT, data, hp);
    expect(stopped.stoppedBy).toBe('early-stopping');
    const losses = stopped.curve.map((report) => report.validationLoss!);
    expect(stopped.bestEpoch).toBe(losses.indexOf(Math.min(...losses)) + 1);
    expect(stopped.curve).toHaveLength(Math.max(stopped.bestEpoch + hp.patience, hp.warmupEpochs));
    // Training is deterministic, so a run of exactly bestEpoch epochs must end on the kept weights.
    const replay = await trainVae(MIXED_LAYOUT, data, { ...hp, epochs: stopped.bestEpoch });
    expect(stopped.network.readWeights()).toEqual(replay.network.readWeights());
    stopped.network.dispose();
    replay.network.dispose();
  });

  it('stops after the current epoch when aborted', async () => {
    const controller = new AbortController();
    const trained = await trainVae(MIXED_LAYOUT, data, { ...SMALL, epochs: 50 }, { onEpoch: (report) => report.epoch === 2 && controller.abort(), signal: controller.signal });
    expect(trained.stoppedBy).toBe('abort');
    expect(trained.curve).toHaveLength(2);
    trained.network.dispose();
  });

  it('rejects data that does not fit the layout, naming the problem', async () => {
    await expect(trainVae(MIXED_LAYOUT, { ...data, width: 7 }, SMALL)).rejects.toThrow(/width 7 .* width 8/);
    await expect(trainVae(MIXED_LAYOUT, { ...data, classes: data.classes.map(() => 5) }, SMALL)).rejects.toThrow(/class index 5/);
  });
});

describe('class-balanced minibatches', () => {
  const counts = [990, 10];
  const classes = Int32Array.from({ length: 1000 }, (_, i) => (i < 990 ? 0 : 1));

  it.each([
    { tempering: 0, rareShare: 0.5 },
    { tempering: 0.5, rareShare: Math.sqrt(10) / (Math.sqrt(10) + Math.sqrt(990)) },
    { tempering: 1, rareShare: 0.01 },
  ])('draws the rare class with probability ∝ count^$tempering', ({ tempering, rareShare }) => {
    const split = stratifiedSplit(classes, 2, 0, createPrng(1));
    const sampler = new BalancedBatchSampler(split.train, classDrawWeights(counts, tempering), createPrng(2));
    const batch = new Int32Array(50_000);
    sampler.next(batch);
    const rare = batch.filter((row) => classes[row] === 1).length / batch.length;
    // Binomial standard error ≤ sqrt(0.25 / 50 000) ≈ 0.0022; tolerance ≈ 4.5 standard errors.
    expect(Math.abs(rare - rareShare)).toBeLessThan(0.01);
  });

  it('holds out floor(fraction · n) rows of each class for validation', () => {
    const split = stratifiedSplit(classes, 2, 0.15, createPrng(3));
    expect(split.validation.map((rows) => rows.length)).toEqual([148, 1]);
    expect(split.train.map((rows) => rows.length)).toEqual([842, 9]);
    expect(new Set([...split.train.flat(), ...split.validation.flat()]).size).toBe(1000);
  });
});

describe('effectiveBatchSize', () => {
  it('keeps the configured size when the data gives at least 10 steps an epoch, else halves it (not below 32)', () => {
    expect(effectiveBatchSize(512, 20_000)).toBe(512);
    expect(effectiveBatchSize(512, 1_315)).toBe(128);
    expect(effectiveBatchSize(512, 100)).toBe(32);
    expect(effectiveBatchSize(16, 100)).toBe(16);
  });
});

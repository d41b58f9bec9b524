/**
 * Detection AUC, the classifier two-sample test (Lopez-Paz & Oquab, ICLR 2017; see
 * shared/REFERENCE-FACTS.md): ≈ 0.5 when the two samples come from one distribution, ≈ 1 when they
 * are far apart.
 */
import { describe, expect, it } from 'vitest';
import { detectionAuc, UNDETERMINED_DETECTION } from '../../../model/quality/detection.js';
import { evaluationStream } from '../../../model/quality/evaluation-streams.js';
import type { FeatureRows } from '../../../model/quality/feature-rows.js';
import { createPrng, type Prng } from '../../../model/random.js';

const WIDTH = 4;
const PER_SIDE = 400;

function gaussianRows(count: number, shift: number, prng: Prng): FeatureRows {
  const values = new Float32Array(count * WIDTH);
  for (let r = 0; r < count; r++) for (let f = 0; f < WIDTH; f++) values[r * WIDTH + f] = prng.normal() + (f === 0 ? shift : 0);
  return { values, width: WIDTH, count };
}

const streams = (seed: number) => (purpose: string, index?: number) => evaluationStream(seed, purpose, index);
/** For independent samples, which real record a synthetic one "came from" is arbitrary: row i % n. */
const roundRobin = (synthetic: number, real: number) => Int32Array.from({ length: synthetic }, (_, i) => i % real);

describe('detectionAuc', () => {
  it('is about 0.5 for a fresh sample of the same distribution', () => {
    const prng = createPrng(5);
    const auc = detectionAuc(gaussianRows(PER_SIDE, 0, prng), gaussianRows(PER_SIDE, 0, prng), roundRobin(PER_SIDE, PER_SIDE), streams(1));
    // Tolerance 0.1: under equality each fold's AUC over 80 + 80 records has standard error
    // sqrt((n + m + 1) / (12·n·m)) ≈ 0.046 (the null variance of the Mann–Whitney statistic),
    // and the folds share training records, so their mean varies nearly as much: over 12 seeds we
    // measured estimates from 0.444 to 0.539 (mean 0.496, sd 0.035). This seed gives 0.461.
    expect(Math.abs(auc.estimate - 0.5)).toBeLessThan(0.1);
    expect(auc.low).toBeLessThanOrEqual(auc.estimate);
    expect(auc.high).toBeGreaterThanOrEqual(auc.estimate);
  });

  it('is near 1 for a sample shifted by 3 standard deviations in one feature', () => {
    const prng = createPrng(6);
    const auc = detectionAuc(gaussianRows(PER_SIDE, 0, prng), gaussianRows(PER_SIDE, 3, prng), roundRobin(PER_SIDE, PER_SIDE), streams(2));
    // The best possible classifier (threshold halfway) reaches AUC Φ(3/√2) ≈ 0.983 for two unit
    // normals 3 apart (binormal ROC, common practice); a forest from 320 + 320 records gets close
    // (this seed: 0.976, folds 0.959–0.993).
    expect(auc.estimate).toBeGreaterThan(0.93);
  });

  it("cannot tell exact copies from their originals, because copies share their source's fold", () => {
    // Each real record repeated 5 times. With folds drawn without regard to sources, a held-out
    // real record's copies would train the forest as "synthetic" and pull the AUC far below 0.5.
    const real = gaussianRows(200, 0, createPrng(8));
    const sources = Int32Array.from({ length: 1000 }, (_, i) => Math.floor(i / 5));
    const copies = { values: Float32Array.from(Array.from(sources).flatMap((row) => [...real.values.subarray(row * WIDTH, (row + 1) * WIDTH)])), width: WIDTH, count: 1000 };
    expect(Math.abs(detectionAuc(real, copies, sources, streams(4)).estimate - 0.5)).toBeLessThan(0.1);
  });

  it('reports the widest interval when a side has fewer than two records', () => {
    const prng = createPrng(7);
    expect(detectionAuc(gaussianRows(50, 0, prng), gaussianRows(1, 0, prng), [0], streams(3))).toEqual(UNDETERMINED_DETECTION);
  });
});

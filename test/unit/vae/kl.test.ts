import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { createPrng } from '../../../model/random.js';
import { initBackend } from '../../../model/vae/backend.js';
import { klPerRow } from '../../../model/vae/likelihood.js';

beforeAll(async () => {
  await initBackend();
});

// Source: Kingma & Welling, "Auto-Encoding Variational Bayes", ICLR 2014, App. B:
// KL(N(mu, sigma²) ‖ N(0, 1)) = ½(mu² + sigma² − 1 − log sigma²); values [calc] from
// shared/REFERENCE-FACTS.md.
const TABLE: readonly { mu: number; variance: number; kl: number }[] = [
  { mu: 0, variance: 1, kl: 0 },
  { mu: 1, variance: 1, kl: 0.5 },
  { mu: 0, variance: 2, kl: 0.1534264 },
  { mu: 0, variance: 0.5, kl: 0.0965736 },
  { mu: 2, variance: 4, kl: 2.8068528 },
];

function klOf(mu: number[][], variance: number[][]): Float32Array {
  return tf.tidy(() => klPerRow(tf.tensor2d(mu), tf.log(tf.tensor2d(variance)) as tf.Tensor2D).dataSync() as Float32Array);
}

describe('KL(q ‖ N(0, I)) in closed form', () => {
  it.each(TABLE)('(mu $mu, sigma² $variance) → $kl', ({ mu, variance, kl }) => {
    expect(klOf([[mu]], [[variance]])[0]).toBeCloseTo(kl, 6);
  });

  it('sums over latent dimensions, one value per row', () => {
    const result = klOf(
      [
        [0, 1, 0],
        [0, 2, 0],
      ],
      [
        [2, 1, 0.5],
        [1, 4, 1],
      ],
    );
    expect(result[0]).toBeCloseTo(0.1534264 + 0.5 + 0.0965736, 5);
    expect(result[1]).toBeCloseTo(2.8068528, 5);
  });

  it('agrees with a Monte-Carlo estimate E_q[log q(z) − log p(z)]', () => {
    // Monte-Carlo: z ~ N(mu, sigma²) drawn with our PRNG; n = 400 000 draws per case. The estimator's
    // standard error sd(log q − log p)/sqrt(n) is largest for (2, 4): sqrt(20.5/n) ≈ 0.0072 [calc];
    // tolerance 0.03 (> 4 standard errors).
    const prng = createPrng(2014);
    const n = 400_000;
    for (const { mu, variance, kl } of TABLE) {
      const sigma = Math.sqrt(variance);
      let sum = 0;
      for (let i = 0; i < n; i++) {
        const epsilon = prng.normal();
        const z = mu + sigma * epsilon;
        const logQ = -0.5 * Math.log(2 * Math.PI * variance) - 0.5 * epsilon * epsilon;
        const logP = -0.5 * Math.log(2 * Math.PI) - 0.5 * z * z;
        sum += logQ - logP;
      }
      const estimate = sum / n;
      expect(Math.abs(estimate - klOf([[mu]], [[variance]])[0]!)).toBeLessThan(0.03);
      expect(Math.abs(estimate - kl)).toBeLessThan(0.03);
    }
  });
});

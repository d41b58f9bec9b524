/**
 * Benchmark: the cost of the worker's drift score (negative ELBO at the posterior mean, one encoder and
 * one decoder pass plus the likelihood terms) per scored record, against rows per call — the worker
 * scores a sample of each batch in one call — on the reference shape (30 features, 2×128 hidden,
 * latent 8; the weights are untrained, which does not change the cost). Prints µs per scored record,
 * the same per consumed record at the worker's 1-in-n sample, and the model's per-record sampling cost
 * (encode + k = 5 decodes) beside it for scale. Asserts nothing.
 *
 *   npx tsx test/bench/drift.ts
 */
import { performance } from 'node:perf_hooks';
import { DEFAULT_DRIFT_SETTINGS } from '../../connector/pipeline/drift-monitor.js';
import { negativeElboScores } from '../../model/drift/score.js';
import { createPrng } from '../../model/random.js';
import { initBackend } from '../../model/vae/backend.js';
import { DEFAULT_HYPER_PARAMETERS } from '../../model/vae/hyperparameters.js';
import { ConditionalVae } from '../../model/vae/network.js';
import { samplePosterior } from '../../model/vae/sampler.js';
import { topologyFor } from '../../model/vae/train.js';
import { buoyLayout } from './buoy-layout.js';

const layout = buoyLayout();

const backend = await initBackend({ log: (message) => console.log(message) });
const network = new ConditionalVae(topologyFor(layout, 2, DEFAULT_HYPER_PARAMETERS), 1);
const model = { id: '0000000000000000', network, layout };
const prng = createPrng(7);

function rows(count: number): { features: Float32Array; classes: Int32Array } {
  const features = new Float32Array(count * layout.width);
  const classes = new Int32Array(count);
  for (let r = 0; r < count; r++) {
    const at = r * layout.width;
    for (let j = 0; j < 21; j++) features[at + j] = prng.normal();
    features[at + 21 + prng.integer(4)] = 1;
    features[at + 25 + prng.integer(3)] = 1;
    features[at + 28] = prng.uniform() < 0.3 ? 1 : 0;
    features[at + 29] = features[at + 28]! * prng.normal();
    classes[r] = prng.uniform() < 0.05 ? 1 : 0;
  }
  return { features, classes };
}

/** Microseconds per row of `run` over calls of `perCall` rows, after a warm-up. */
function microsecondsPerRow(perCall: number, run: (block: { features: Float32Array; classes: Int32Array }) => void): number {
  const block = rows(perCall);
  for (let i = 0; i < 3; i++) run(block);
  const calls = Math.max(5, Math.ceil(20_000 / perCall));
  const start = performance.now();
  for (let i = 0; i < calls; i++) run(block);
  return ((performance.now() - start) * 1000) / (calls * perCall);
}

console.log(`\nbackend ${backend}; µs per record, by rows per call`);
const oneIn = DEFAULT_DRIFT_SETTINGS.sampleOneIn;
console.log(`rows/call  drift score  per consumed record (1 in ${oneIn})  sampling k=5 (encode + 5 decodes)`);
for (const perCall of [1, 32, DEFAULT_DRIFT_SETTINGS.scoreRows, 512]) {
  const score = microsecondsPerRow(perCall, ({ features, classes }) => negativeElboScores(model, features, classes));
  const sample = microsecondsPerRow(perCall, ({ features, classes }) => {
    const sources = Array.from(classes, (classIndex, r) => ({
      features: features.subarray(r * layout.width, (r + 1) * layout.width),
      classIndex,
      key: { topic: 'bench', partition: 0, offset: r },
      k: 5,
    }));
    samplePosterior(model, sources, { temperature: 1, seed: 1 });
  });
  console.log(`${String(perCall).padStart(9)}  ${score.toFixed(1).padStart(8)} µs  ${(score / oneIn).toFixed(2).padStart(26)} µs  ${sample.toFixed(1).padStart(8)} µs`);
}
network.dispose();

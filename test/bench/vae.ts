/**
 * Benchmark: the conditional VAE on the reference shape (30 features, 2×128 hidden, latent 8), on
 * invented harbour-buoy readings with a rare "storm" class. Prints, in one run and side by side:
 *   - the tensor backend;
 *   - forward-pass throughput of encoder and decoder against rows per pass (the batch-size sweep
 *     behind INFERENCE_CHUNK_ROWS) and training throughput against minibatch size;
 *   - training rows/s at the default hyper-parameters;
 *   - encode + k-decode throughput of the batched sampler against a naive per-record loop, as a
 *     ratio (and whether both produced identical samples).
 * Asserts nothing.
 *
 *   npx tsx test/bench/vae.ts [records-to-sample] [k]
 */
import { performance } from 'node:perf_hooks';
import * as tf from '@tensorflow/tfjs';
import { createPrng } from '../../model/random.js';
import { initBackend } from '../../model/vae/backend.js';
import type { TrainingData } from '../../model/vae/dataset.js';
import { DEFAULT_HYPER_PARAMETERS } from '../../model/vae/hyperparameters.js';
import { headIndexFor, klPerRow, reconstructionNllPerRow } from '../../model/vae/likelihood.js';
import { ConditionalVae } from '../../model/vae/network.js';
import { samplePosterior, type SourceRow } from '../../model/vae/sampler.js';
import { topologyFor, trainVae } from '../../model/vae/train.js';
import { buoyLayout } from './buoy-layout.js';

const recordsToSample = Number(process.argv[2] ?? 2000);
const k = Number(process.argv[3] ?? 5);

const layout = buoyLayout();

function buoyData(rows: number): TrainingData {
  const prng = createPrng(2024);
  const width = layout.width;
  const features = new Float32Array(rows * width);
  const classes = new Int32Array(rows);
  for (let r = 0; r < rows; r++) {
    const storm = prng.uniform() < 0.05 ? 1 : 0;
    classes[r] = storm;
    const energy = prng.normal() + 2 * storm;
    const season = prng.normal();
    const at = r * width;
    for (let j = 0; j < 21; j++) features[at + j] = Math.sin(j) * energy + Math.cos(j) * season + 0.4 * prng.normal();
    features[at + 21 + Math.min(3, Math.max(0, Math.floor(energy + 1.5)))] = 1;
    features[at + 25 + (storm && prng.uniform() < 0.5 ? 2 : prng.uniform() < 0.2 ? 1 : 0)] = 1;
    const gust = prng.uniform() < (storm ? 0.9 : 0.3);
    features[at + 28] = gust ? 1 : 0;
    features[at + 29] = gust ? energy + 0.3 * prng.normal() : 0;
  }
  return { width, features, classes, classNames: ['calm_day', 'storm'] };
}

function rate(rows: number, milliseconds: number): string {
  return `${Math.round(rows / (milliseconds / 1000)).toLocaleString('en-US')} rows/s`;
}

const backend = await initBackend({ log: (message) => console.log(message) });
const data = buoyData(20_000);
const hp = DEFAULT_HYPER_PARAMETERS;

console.log(`\nforward passes, rows per pass → throughput (backend ${backend})`);
const sweepNetwork = new ConditionalVae(topologyFor(layout, 2, hp), 1);
for (const rows of [1, 16, 64, 256, 512, 1024, 2048, 4096, 8192, 16384, 65536]) {
  const timings = tf.tidy(() => {
    const features = tf.randomNormal([rows, 30]) as tf.Tensor2D;
    const classOneHot = tf.oneHot(tf.zeros([rows], 'int32'), 2).toFloat() as tf.Tensor2D;
    const latent = tf.randomNormal([rows, hp.latent]) as tf.Tensor2D;
    const passes = Math.max(3, Math.ceil(40_000 / rows));
    const time = (pass: () => void) => {
      pass();
      const start = performance.now();
      for (let i = 0; i < passes; i++) pass();
      return performance.now() - start;
    };
    const encode = time(() => tf.tidy(() => void sweepNetwork.encode(features, classOneHot).mu.dataSync()));
    const decode = time(() => tf.tidy(() => void sweepNetwork.decode(latent, classOneHot).dataSync()));
    return { encode: rate(rows * passes, encode), decode: rate(rows * passes, decode) };
  });
  console.log(`  ${String(rows).padStart(6)} rows/pass   encode ${timings.encode.padStart(16)}   decode ${timings.decode.padStart(16)}`);
}

console.log('\ntraining steps (forward + backward + Adam), minibatch size → throughput');
const heads = headIndexFor(layout);
for (const batch of [32, 64, 128, 256, 512, 1024, 2048]) {
  const optimizer = tf.train.adam(hp.learningRate);
  const features = tf.tensor2d(data.features.subarray(0, batch * 30), [batch, 30]);
  const classOneHot = tf.oneHot(tf.tensor1d(data.classes.subarray(0, batch), 'int32'), 2).toFloat() as tf.Tensor2D;
  const epsilon = tf.randomNormal([batch, hp.latent]);
  const step = () =>
    tf.tidy(() => {
      optimizer.minimize(
        () => {
          const { mu, logVariance } = sweepNetwork.encode(features, classOneHot);
          const z = tf.add(mu, tf.mul(tf.exp(tf.mul(0.5, logVariance)), epsilon)) as tf.Tensor2D;
          const decoded = sweepNetwork.decode(z, classOneHot);
          const nll = reconstructionNllPerRow(features, decoded, sweepNetwork.continuousLogVariance as tf.Tensor1D, heads);
          return tf.add(tf.mean(nll), tf.mean(klPerRow(mu, logVariance))) as tf.Scalar;
        },
        false,
        sweepNetwork.variables,
      );
    });
  step();
  const steps = Math.max(5, Math.ceil(20_000 / batch));
  const start = performance.now();
  for (let i = 0; i < steps; i++) step();
  console.log(`  ${String(batch).padStart(6)} rows/batch  ${rate(batch * steps, performance.now() - start).padStart(16)}`);
  tf.dispose([features, classOneHot, epsilon]);
  optimizer.dispose();
}
sweepNetwork.dispose();

console.log(`\ntraining at the defaults (hidden ${hp.hidden.join('×')}, latent ${hp.latent}, batch ${hp.batchSize}), 3 epochs of 20 000 rows`);
const trained = await trainVae(layout, data, { epochs: 3 }, {
  onEpoch: (report) =>
    console.log(`  epoch ${report.epoch}: recon ${report.reconstruction.toFixed(2)}  kl ${report.kl.toFixed(2)}  β ${report.beta.toFixed(2)}  ${rate(1, 1000 / report.rowsPerSecond)}`),
});

const stormRows: SourceRow[] = [];
for (let r = 0; r < data.classes.length && stormRows.length < recordsToSample; r++) {
  if (data.classes[r] !== 1) continue;
  stormRows.push({ features: data.features.slice(r * 30, (r + 1) * 30), classIndex: 1, key: { topic: 'buoys', partition: 0, offset: r }, k });
}
const model = { id: 'bench', network: trained.network, layout };
const options = { temperature: 1, seed: 7 };
console.log(`\nsampling ${stormRows.length} records × k=${k} (encode once, decode k, draw the likelihood)`);
samplePosterior(model, stormRows.slice(0, 10), options);
let start = performance.now();
const batched = samplePosterior(model, stormRows, options);
const batchedMs = performance.now() - start;
start = performance.now();
const perRecord = stormRows.map((row) => samplePosterior(model, [row], options)[0]!);
const perRecordMs = performance.now() - start;
start = performance.now();
const perSample = stormRows.map((row) =>
  Array.from({ length: k }, (_, i) => samplePosterior(model, [{ ...row, k: 1, firstSampleIndex: i }], options)[0]![0]!),
);
const perSampleMs = performance.now() - start;
const same = JSON.stringify(batched) === JSON.stringify(perRecord) && JSON.stringify(batched) === JSON.stringify(perSample);
console.log(`  batched sampler        ${rate(stormRows.length, batchedMs).padStart(16)}  (${rate(stormRows.length * k, batchedMs)} synthetic)`);
console.log(`  naive, one record/pass ${rate(stormRows.length, perRecordMs).padStart(16)}  → batched is ${(perRecordMs / batchedMs).toFixed(1)}× faster`);
console.log(`  naive, one sample/pass ${rate(stormRows.length, perSampleMs).padStart(16)}  → batched is ${(perSampleMs / batchedMs).toFixed(1)}× faster`);
console.log(`  identical samples from all three: ${same ? 'yes' : 'NO'}`);
trained.network.dispose();

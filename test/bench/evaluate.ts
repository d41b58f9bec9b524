/**
 * Benchmark: `evaluateQuality` on 20,000 records (goal: at most 2 minutes on the shared 2-core
 * machine). Invented scenario: telemetry of cold-store compressors, mixed types (an identifier, five
 * numbers, a count, a boolean, an enum, a string category, a nullable reading), four states of which
 * two are rare (about 1 % each). Fits a small model, then evaluates with k synthetic records per rare
 * record, and prints the time of every stage so the slow one shows, then the headline numbers.
 * Asserts nothing.
 *
 *   npx tsx test/bench/evaluate.ts [records] [k] [epochs]
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import type { AvroRecord } from '../../model/features/avro-types.js';
import { fitModel } from '../../model/fit.js';
import { evaluateQuality } from '../../model/quality/evaluate.js';
import type { LabelledRecord } from '../../model/quality/quality-report.js';
import { createPrng } from '../../model/random.js';
import { loadTrainedModel } from '../../model/trained-model.js';
import { saveModel } from '../../model/vae/index.js';
import { positiveInteger } from './flags.js';

const records = positiveInteger('records', process.argv[2] ?? '20000');
const k = positiveInteger('k', process.argv[3] ?? '5');
const epochs = positiveInteger('epochs', process.argv[4] ?? '8');
const RARE = ['refrigerant_leak', 'compressor_fault'];

const compressorSchema = {
  type: 'record',
  name: 'CompressorReading',
  namespace: 'bench.raretide.coldstore',
  fields: [
    { name: 'unit_id', type: 'string' },
    { name: 'suction_bar', type: 'double' },
    { name: 'discharge_c', type: 'double' },
    { name: 'motor_amps', type: 'double' },
    { name: 'oil_c', type: 'double' },
    { name: 'superheat_k', type: 'double' },
    { name: 'door_openings', type: 'int' },
    { name: 'defrosting', type: 'boolean' },
    { name: 'zone', type: { type: 'enum', name: 'Zone', symbols: ['freezer', 'chiller', 'dock'] } },
    { name: 'shift', type: 'string' },
    { name: 'ambient_c', type: ['null', 'double'] },
    { name: 'state', type: { type: 'enum', name: 'State', symbols: ['normal', 'busy', 'refrigerant_leak', 'compressor_fault'] } },
  ],
};

function compressorReadings(count: number): LabelledRecord[] {
  const prng = createPrng(2026);
  return Array.from({ length: count }, (_, i) => {
    const draw = prng.uniform();
    const state = draw < 0.01 ? 'refrigerant_leak' : draw < 0.02 ? 'compressor_fault' : draw < 0.25 ? 'busy' : 'normal';
    const leak = state === 'refrigerant_leak' ? 1 : 0;
    const fault = state === 'compressor_fault' ? 1 : 0;
    const busy = state === 'busy' ? 1 : 0;
    const load = prng.normal() + busy;
    const zone = (['freezer', 'chiller', 'dock'] as const)[prng.integer(3)]!;
    const record = {
      unit_id: `CS-${String(10000 + (i % 400))}`,
      suction_bar: 2.4 - 0.2 * leak + 0.15 * load + 0.1 * prng.normal(),
      discharge_c: 70 + 4 * load + 4 * fault - 2 * leak + 2 * prng.normal(),
      motor_amps: 12 + 1.5 * load + 1.5 * fault + 0.8 * prng.normal(),
      oil_c: 45 + 2 * load + 3 * fault + 1.5 * prng.normal(),
      superheat_k: 6 + 1.5 * leak + 0.5 * load + Math.abs(prng.normal()),
      door_openings: Math.max(0, Math.round(3 * busy + (zone === 'dock' ? 4 : 1) + 2 * prng.normal())),
      defrosting: prng.uniform() < 0.1,
      zone,
      shift: (['day', 'night', 'weekend'] as const)[prng.integer(3)]!,
      ambient_c: prng.uniform() < 0.15 ? null : 18 + 6 * prng.normal() + 3 * fault,
      state,
    };
    return { record: record as AvroRecord, className: state };
  });
}

const data = compressorReadings(records);
const workspace = await mkdtemp(join(tmpdir(), 'raretide-bench-evaluate-'));
try {
  const fitStarted = performance.now();
  const fitted = await fitModel({
    schema: compressorSchema,
    records: data.map(({ record }) => record),
    labelPath: 'state',
    training: { hidden: [64, 64], epochs, patience: epochs, seed: 1 },
  });
  await saveModel(join(workspace, 'model'), fitted.bundle);
  fitted.dispose();
  const model = await loadTrainedModel(join(workspace, 'model'));
  const fitMs = performance.now() - fitStarted;

  const stages: { stage: string; started: number }[] = [];
  const started = performance.now();
  const report = await evaluateQuality(
    { records: data, sourceDescription: 'invented cold-store telemetry', model, rareClasses: RARE },
    { seed: 11, k, temperature: 1, onProgress: (stage) => stages.push({ stage, started: performance.now() }) },
  );
  const evaluateMs = performance.now() - started;
  model.dispose();

  const rareCount = data.filter(({ className }) => RARE.includes(className)).length;
  console.log(`records ${records} (rare ${rareCount}: ${RARE.join(', ')}), features ${model.codec.width}, k ${k}`);
  console.log(`fit (${epochs} epochs, not part of the goal): ${seconds(fitMs)}`);
  console.log('stage                          time');
  const byKind = new Map<string, number>();
  stages.forEach(({ stage, started: at }, i) => {
    if (stage === 'done') return;
    const ms = stages[i + 1]!.started - at;
    console.log(`  ${stage.padEnd(28)} ${seconds(ms)}`);
    const kind = stage.split(' ')[0]!;
    byKind.set(kind, (byKind.get(kind) ?? 0) + ms);
  });
  console.log(`by kind: ${[...byKind].map(([kind, ms]) => `${kind} ${seconds(ms)}`).join(' · ')}`);
  console.log(`evaluate total: ${seconds(evaluateMs)} (goal ≤ 120 s)`);
  console.log(`synthetic counts: ${report.generators.map(({ generator, syntheticCounts }) => `${generator} ${JSON.stringify(syntheticCounts)}`).join(' · ')}`);
  for (const generator of report.generators) {
    const forest = generator.usefulness.find(({ classifier }) => classifier === 'random-forest')!;
    const detection = generator.fidelity?.map(({ className, detectionAuc }) => `${className} ${detectionAuc.estimate.toFixed(2)}`).join(', ') ?? '–';
    console.log(
      `  ${generator.generator.padEnd(16)} forest PR-AUC ${forest.classes.map(({ className, prAuc }) => `${className} ${prAuc.estimate.toFixed(3)}`).join(', ')} · detection AUC ${detection}`,
    );
  }
  console.log(`verdict: ${report.verdict.headline}`);
} finally {
  await rm(workspace, { recursive: true, force: true });
}

function seconds(ms: number): string {
  return `${(ms / 1000).toFixed(1)} s`;
}

/**
 * `evaluateQuality`: does augmenting with the VAE's records help a classifier, how faithful are
 * they, and does any copy a real record? Every generator (none, duplication, SMOTE, a Gaussian
 * copula, the VAE) runs on the same stratified train split, and everything is scored on the same
 * real holdout; synthetic records are never scored as if they were real. Pure apart from the clock:
 * the same input, model and seed give the same numbers.
 *
 * Progress: `onProgress(stage, done)` is called as each stage starts (`split`, then per generator
 * `generate <name>`, `usefulness <name>`, `fidelity <name>`; then `plots`), and `done` is the share of
 * stages finished so far; a last call (`done`, 1) ends the run.
 */
import { UsageError } from '../../config/errors.js';
import { mostProbableClass, type RandomForest } from './classifiers/random-forest.js';
import { checkRareClasses, resolveEvaluationOptions } from './evaluation-options.js';
import { evaluationStream } from './evaluation-streams.js';
import { concatRows, encodeRows, selectRows, type FeatureRows } from './feature-rows.js';
import { classFidelity } from './fidelity.js';
import { generate, type GeneratedRecords, type RareClassTrain } from './generators/generate.js';
import { leafFields } from './leaf-fields.js';
import { stratifiedResamples } from './metrics/bootstrap.js';
import { buildPlots } from './plots.js';
import { RecordFingerprints, closestRecordPercentiles } from './privacy.js';
import {
  GENERATOR_NAMES,
  QUALITY_REPORT_FORMAT,
  QUALITY_REPORT_VERSION,
  type ClassFidelity,
  type ClassPrivacy,
  type DistancePercentiles,
  type EvaluationInput,
  type EvaluationOptions,
  type GeneratorName,
  type GeneratorResult,
  type QualityReport,
} from './quality-report.js';
import { countByClass, givenHoldout, splitTrainHoldout } from './split.js';
import { measureUsefulness, type LabelledRows } from './usefulness.js';
import { writeVerdict } from './verdict.js';

const STAGES_PER_GENERATOR = 3;

export async function evaluateQuality(input: EvaluationInput, options: EvaluationOptions): Promise<QualityReport> {
  const settings = resolveEvaluationOptions(options);
  const { seed, k, now } = settings;
  const started = now();
  const totalStages = 2 + STAGES_PER_GENERATOR * GENERATOR_NAMES.length;
  let stagesDone = 0;
  const stage = async (name: string) => {
    settings.onProgress(name, stagesDone++ / totalStages);
    // Lets a progress bar draw between the synchronous stages.
    await new Promise((resolve) => setImmediate(resolve));
  };

  await stage('split');
  if (input.records.length === 0) throw new UsageError('evaluate: the input holds no records: give the records the model was fitted on', { code: 'evaluate.options' });
  const split = input.holdout === undefined ? splitTrainHoldout(input.records, seed, settings.holdoutShare) : givenHoldout(input.records, input.holdout);
  checkRareClasses(input.rareClasses, split.train, split.holdout);
  const { model } = input;
  const { codec } = model;
  const classNames = [...new Set(split.train.map(({ className }) => className))];
  const classIndex = new Map(classNames.map((name, i) => [name, i]));
  const trainRecords = split.train.map(({ record }) => record);
  const train: LabelledRows = { rows: encodeRows(codec, trainRecords), labels: Int32Array.from(split.train, ({ className }) => classIndex.get(className)!) };
  const holdout: LabelledRows = {
    rows: encodeRows(codec, split.holdout.map(({ record }) => record)),
    labels: Int32Array.from(split.holdout, ({ className }) => classIndex.get(className) ?? -1),
  };
  const rareIndices = input.rareClasses.map((name) => classIndex.get(name)!);
  const rare: RareClassTrain[] = input.rareClasses.map((className) => {
    const trainIndices = split.train.flatMap((record, i) => (record.className === className ? [i] : []));
    return { className, records: trainIndices.map((i) => trainRecords[i]!), features: selectRows(train.rows, trainIndices), trainIndices };
  });
  const holdoutStrata = holdoutClassCodes(split.holdout.map(({ className }) => className));
  const resamples = stratifiedResamples(holdoutStrata, settings.bootstrapResamples, (b) => evaluationStream(seed, 'bootstrap', b));
  const fingerprints = new RecordFingerprints(model.schemaType, trainRecords);
  const holdoutToTrain = new Map<string, DistancePercentiles>(
    rare.map(({ className }) => {
      const rows = selectRows(holdout.rows, split.holdout.flatMap((record, i) => (record.className === className ? [i] : [])));
      return [className, closestRecordPercentiles(rows, train.rows, evaluationStream(seed, `dcr/holdout/${className}`))];
    }),
  );
  const leaves = leafFields(codec.layout);
  const generatorSettings = { model, k, temperature: settings.temperature, seed };

  const results: GeneratorResult[] = [];
  const synthetic = new Map<GeneratorName, GeneratedRecords>();
  const syntheticRows = new Map<GeneratorName, ReadonlyMap<string, FeatureRows>>();
  let realForest: RandomForest | undefined;
  for (const generator of GENERATOR_NAMES) {
    await stage(`generate ${generator}`);
    const generationStarted = now();
    const made = generate(generator, rare, generatorSettings);
    const generationMs = now() - generationStarted;
    const madeRows = new Map([...made].map(([className, { records }]) => [className, encodeRows(codec, records)]));
    synthetic.set(generator, made);
    syntheticRows.set(generator, madeRows);

    await stage(`usefulness ${generator}`);
    const augmented: LabelledRows = {
      rows: concatRows(codec.width, [train.rows, ...madeRows.values()]),
      labels: Int32Array.from([...train.labels, ...[...madeRows].flatMap(([className, rows]) => Array<number>(rows.count).fill(classIndex.get(className)!))]),
    };
    const { usefulness, forest } = measureUsefulness({
      train: augmented,
      holdout,
      classNames,
      rareClasses: rareIndices,
      resamples,
      forestStream: (tree) => evaluationStream(seed, `usefulness/${generator}/forest`, tree),
    });
    realForest ??= forest;

    await stage(`fidelity ${generator}`);
    const syntheticCounts = Object.fromEntries([...made].map(([className, { records }]) => [className, records.length]));
    if (generator === 'none') {
      results.push({ generator, syntheticCounts, usefulness, generationMs });
      continue;
    }
    const fidelity: ClassFidelity[] = [];
    const privacy: ClassPrivacy[] = [];
    // A class the generator made nothing of has nothing to compare: it is left out here (its count says 0).
    for (const group of rare.filter(({ className }) => made.get(className)!.records.length > 0)) {
      const { records, sources } = made.get(group.className)!;
      const rows = madeRows.get(group.className)!;
      const streams = (purpose: string, index?: number) => evaluationStream(seed, `detection/${generator}/${group.className}/${purpose}`, index);
      fidelity.push(
        classFidelity(
          { className: group.className, real: group.records, realFeatures: group.features, synthetic: records, syntheticFeatures: rows, sources },
          leaves,
          labelFidelity(realForest, rows, classIndex.get(group.className)!),
          streams,
        ),
      );
      privacy.push({
        className: group.className,
        exactCopies: fingerprints.countCopies(records),
        syntheticToTrain: closestRecordPercentiles(rows, train.rows, evaluationStream(seed, `dcr/${generator}/${group.className}`)),
        holdoutToTrain: holdoutToTrain.get(group.className)!,
      });
    }
    results.push({ generator, syntheticCounts, fidelity, privacy, usefulness, generationMs });
  }

  await stage('plots');
  const plots = buildPlots({ leaves, rare, synthetic, syntheticRows, projectionStream: evaluationStream(seed, 'projection') });
  const requested = Object.fromEntries(rare.map(({ className, records }) => [className, records.length * k]));
  const verdict = writeVerdict({ generators: results, requested });
  settings.onProgress('done', 1);
  return {
    format: QUALITY_REPORT_FORMAT,
    version: QUALITY_REPORT_VERSION,
    createdAt: new Date().toISOString(),
    input: {
      source: input.sourceDescription,
      modelId: model.id,
      labelPath: model.labelPath,
      seed,
      k,
      temperature: settings.temperature,
      train: countByClass(split.train),
      holdout: countByClass(split.holdout),
      rareClasses: [...input.rareClasses],
      holdoutFrom: split.holdoutFrom,
    },
    generators: results,
    plots,
    verdict,
    elapsedMs: now() - started,
  };
}

/** Share of the rows a forest trained on real records assigns to `classIndex`. */
function labelFidelity(forest: RandomForest, rows: FeatureRows, classIndex: number): number {
  if (rows.count === 0) return 0;
  const predicted = mostProbableClass(forest.probabilities(rows), forest.classCount);
  return predicted.filter((c) => c === classIndex).length / rows.count;
}

/** A small integer per holdout class name (classes the train split lacks included), to stratify resamples. */
function holdoutClassCodes(classNames: readonly string[]): Int32Array {
  const codes = new Map<string, number>();
  return Int32Array.from(classNames, (name) => {
    if (!codes.has(name)) codes.set(name, codes.size);
    return codes.get(name)!;
  });
}

/**
 * The whole evaluation on open data: NOAA Seattle daily weather 2012–2015 (vega-datasets
 * `data/seattle-weather.csv`, loaded by test/support/open-data/seattle-weather.ts), "snow" the rare
 * class (26 of 1,461 days). A small model is fitted on the same stratified train split that
 * `evaluateQuality` makes from the same seed, so the holdout is unseen by the VAE; the report must
 * be complete, consistent and sane.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { AvroRecord } from '../../../model/features/index.js';
import { fitModel } from '../../../model/fit.js';
import { evaluateQuality } from '../../../model/quality/evaluate.js';
import { GENERATOR_NAMES, type GeneratorName, type GeneratorResult, type QualityReport } from '../../../model/quality/quality-report.js';
import { splitTrainHoldout } from '../../../model/quality/split.js';
import { loadTrainedModel, type TrainedModel } from '../../../model/trained-model.js';
import { saveModel } from '../../../model/vae/index.js';
import { seattleWeatherRows, seattleWeatherSchema } from '../../support/open-data/seattle-weather.js';

const SEED = 7;
const K = 5;
/** Few epochs keep the test quick; batch 128 as in test/unit/vae/seattle-weather.test.ts (why: see there). */
const TRAINING = { batchSize: 128, epochs: 30, patience: 10, seed: 1 };

const days = seattleWeatherRows();
const labelled = days.map((day) => ({ record: day as unknown as AvroRecord, className: day.weather }));
let workspace = '';
let model: TrainedModel;
let report: QualityReport;
const stages: string[] = [];

function result(name: GeneratorName): GeneratorResult {
  return report.generators.find((generator) => generator.generator === name)!;
}

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-evaluate-'));
  const { train } = splitTrainHoldout(labelled, SEED, 0.25);
  const fitted = await fitModel({ schema: seattleWeatherSchema, records: train.map(({ record }) => record), labelPath: 'weather', training: TRAINING });
  try {
    await saveModel(join(workspace, 'model'), fitted.bundle);
  } finally {
    fitted.dispose();
  }
  model = await loadTrainedModel(join(workspace, 'model'));
  report = await evaluateQuality(
    { records: labelled, sourceDescription: 'vega-datasets seattle-weather.csv', model, rareClasses: ['snow'] },
    { seed: SEED, k: K, temperature: 1, onProgress: (stage) => stages.push(stage) },
  );
}, 180_000);

afterAll(async () => {
  model?.dispose();
  await rm(workspace, { recursive: true, force: true });
});

describe('evaluateQuality on NOAA Seattle weather (vega-datasets)', () => {
  it('splits each class 75/25 and describes its input', () => {
    // 26 snow days: round(0.25 · 26) = 7 held out, 19 to train on.
    expect(report.input.train.snow).toBe(19);
    expect(report.input.holdout.snow).toBe(7);
    for (const weather of ['drizzle', 'rain', 'sun', 'snow', 'fog']) {
      const all = days.filter((day) => day.weather === weather).length;
      expect(report.input.train[weather]! + report.input.holdout[weather]!).toBe(all);
    }
    expect(report.input).toMatchObject({ modelId: model.id, labelPath: 'weather', seed: SEED, k: K, temperature: 1, rareClasses: ['snow'] });
    expect(model.records.perClass.snow).toBe(19);
  });

  it('runs every generator and counts what each made (k per real snow day of the train split)', () => {
    expect(report.generators.map(({ generator }) => generator)).toEqual([...GENERATOR_NAMES]);
    expect(result('none').syntheticCounts).toEqual({ snow: 0 });
    for (const name of ['duplication', 'smote', 'gaussian-copula'] as const) expect(result(name).syntheticCounts).toEqual({ snow: 19 * K });
    // The VAE's guard may drop copies and near copies: at most k each, and most kept.
    expect(result('vae').syntheticCounts.snow).toBeLessThanOrEqual(19 * K);
    expect(result('vae').syntheticCounts.snow).toBeGreaterThanOrEqual(0.9 * 19 * K);
  });

  it('finds no copy among the VAE records and k copies of each record under duplication', () => {
    expect(result('vae').privacy![0]!.exactCopies).toBe(0);
    expect(result('duplication').privacy![0]!.exactCopies).toBe(19 * K);
    expect(result('duplication').privacy![0]!.syntheticToTrain).toEqual({ p5: 0, p50: 0, p95: 0 });
    for (const name of ['smote', 'gaussian-copula', 'vae'] as const) {
      const { syntheticToTrain, holdoutToTrain } = result(name).privacy![0]!;
      expect(syntheticToTrain.p5).toBeLessThanOrEqual(syntheticToTrain.p50);
      expect(syntheticToTrain.p50).toBeLessThanOrEqual(syntheticToTrain.p95);
      expect(holdoutToTrain.p5).toBeLessThanOrEqual(holdoutToTrain.p95);
    }
  });

  it('compares the four learned fields with KS and keeps every number in range', () => {
    for (const name of ['duplication', 'smote', 'gaussian-copula', 'vae'] as const) {
      const fidelity = result(name).fidelity![0]!;
      expect(fidelity.fields.map(({ field, statistic }) => `${field}:${statistic}`)).toEqual(['precipitation:ks', 'temp_max:ks', 'temp_min:ks', 'wind:ks']);
      for (const { value } of fidelity.fields) expect(value).toSatisfy((v: number) => v >= 0 && v <= 1);
      expect(fidelity.detectionAuc.low).toBeLessThanOrEqual(fidelity.detectionAuc.high);
      expect(fidelity.labelFidelity).toSatisfy((v: number) => v >= 0 && v <= 1);
    }
    // Exact copies have the very distribution of the real records.
    expect(result('duplication').fidelity![0]!.fields.every(({ value }) => value === 0)).toBe(true);
  });

  it('scores both classifiers for every generator with intervals around the estimates', () => {
    for (const generator of report.generators) {
      expect(generator.usefulness.map(({ classifier }) => classifier)).toEqual(['logistic-regression', 'random-forest']);
      for (const { classes } of generator.usefulness) {
        for (const metric of ['precision', 'recall', 'f1', 'prAuc', 'rocAuc'] as const) {
          const { estimate, low, high } = classes[0]![metric];
          expect([low, estimate, high].every((v) => v >= 0 && v <= 1)).toBe(true);
          expect(low).toBeLessThanOrEqual(high);
        }
      }
    }
    // Snow days are cold and wet: even without augmentation both classifiers rank them well.
    for (const { classes } of result('none').usefulness) expect(classes[0]!.rocAuc.estimate).toBeGreaterThan(0.8);
  });

  it('carries plot data of the right shapes, and a verdict', () => {
    const distributions = report.plots.distributions.snow!;
    expect(distributions.map(({ field }) => field)).toEqual(['precipitation', 'temp_max', 'temp_min', 'wind']);
    for (const distribution of distributions) {
      if (distribution.kind !== 'continuous') throw new Error('expected continuous fields only');
      expect(distribution.edges).toHaveLength(21);
      expect(distribution.real.reduce((a, b) => a + b, 0)).toBe(19);
      expect(distribution.synthetic.vae!.reduce((a, b) => a + b, 0)).toBe(result('vae').syntheticCounts.snow);
    }
    expect(report.plots.correlations.snow!.real.fields).toEqual(['precipitation', 'temp_max', 'temp_min', 'wind']);
    expect(report.plots.projection.filter(({ origin }) => origin === 'real')).toHaveLength(19);
    expect(report.plots.projection.length).toBeLessThanOrEqual(3000);
    expect(report.verdict.headline.length).toBeGreaterThan(20);
    expect(report.verdict.details.some((line) => line.startsWith('Duplication repeats real records'))).toBe(true);
  });

  it('is plain JSON (no NaN or undefined is lost on the way) and reports its stages', () => {
    expect(JSON.parse(JSON.stringify(report))).toEqual(report);
    expect(stages[0]).toBe('split');
    expect(stages.at(-1)).toBe('done');
    expect(stages).toContain('usefulness vae');
  });
});

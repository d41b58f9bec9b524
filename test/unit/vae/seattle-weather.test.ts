/**
 * Acceptance on open data: NOAA Seattle daily weather 2012–2015 (vega-datasets
 * `data/seattle-weather.csv`), "snow" the rare class (26 of 1,461 days, 1.8 %). Fit on every day,
 * draw k = 10 variants of each real snow day, and check that they look like snow days.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { AvroRecord } from '../../../model/features/index.js';
import { fitModel } from '../../../model/fit.js';
import { synthesize } from '../../../model/synthesize.js';
import { loadTrainedModel, type TrainedModel } from '../../../model/trained-model.js';
import { saveModel } from '../../../model/vae/index.js';
import { seattleWeatherRows, seattleWeatherSchema, type WeatherDay } from '../../support/open-data/seattle-weather.js';
import { fitLogisticRegression } from '../../support/stats/logistic-regression.js';
import { ksCriticalValue05, ksStatistic } from '../../support/stats/two-sample-ks.js';

const CONTINUOUS = ['precipitation', 'temp_max', 'temp_min', 'wind'] as const;
const WEATHER = seattleWeatherSchema.fields[5].type.symbols;
const K = 10;

/**
 * Model defaults except the batch: at the default 512, 1,461 rows give 3 steps an epoch, and runs
 * ended early on a noisy validation loss before the snow class was learned (seed 2: stopped at
 * epoch 19, 59 % labelled snow). At 128 (12 steps an epoch) seeds 1–4 gave 87, 87, 89 and 88 %,
 * all KS under the critical value; patience 20 keeps the 2-row snow validation share from ending
 * training early.
 */
const TRAINING = { batchSize: 128, epochs: 100, patience: 20, seed: 1 };

const days = seattleWeatherRows();
const snowDays = days.filter((day) => day.weather === 'snow');
let workspace = '';
let model: TrainedModel;
let synthetic: WeatherDay[] = [];

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-seattle-'));
  const fitted = await fitModel({ schema: seattleWeatherSchema, records: days as unknown as AvroRecord[], labelPath: 'weather', training: TRAINING });
  try {
    await saveModel(join(workspace, 'model'), fitted.bundle);
  } finally {
    fitted.dispose();
  }
  model = await loadTrainedModel(join(workspace, 'model'));
  const result = synthesize(
    model,
    snowDays.map((day, offset) => ({ record: day as unknown as AvroRecord, className: 'snow', key: { topic: 'weather.daily', partition: 0, offset }, k: K })),
    { temperature: 1, seed: 7 },
  );
  synthetic = result.records.map(({ record }) => record as unknown as WeatherDay);
}, 180_000);

afterAll(async () => {
  model?.dispose();
  await rm(workspace, { recursive: true, force: true });
});

describe('synthetic snow days (NOAA Seattle weather, vega-datasets)', () => {
  it('keeps nearly all k variants of every snow day through the guards', () => {
    expect(model.records.perClass.snow).toBe(26);
    // The guard drops exact and near copies; on this model it dropped none or one of 260.
    expect(synthetic.length).toBeGreaterThanOrEqual(0.95 * K * snowDays.length);
  });

  it('matches real snow days field by field (two-sample KS under the α = 0.05 critical value)', () => {
    // Critical value 1.36·sqrt((n+m)/(n·m)): handbook large-sample two-sample KS, α = 0.05
    // (../shared/REFERENCE-FACTS.md). With m = 26 real snow days it is ≈ 0.28.
    const critical = ksCriticalValue05(synthetic.length, snowDays.length);
    for (const field of CONTINUOUS) {
      const d = ksStatistic(
        synthetic.map((day) => day[field]),
        snowDays.map((day) => day[field]),
      );
      expect({ field, d: Number(d.toFixed(3)) }).toEqual({ field, d: expect.toSatisfy((value: number) => value < critical) });
    }
    // The same threshold has teeth: real rain days are told apart from snow days by temperature.
    const rainDays = days.filter((day) => day.weather === 'rain');
    expect(ksStatistic(rainDays.map((day) => day.temp_min), snowDays.map((day) => day.temp_min))).toBeGreaterThan(ksCriticalValue05(rainDays.length, snowDays.length));
  });

  it('is labelled snow by a classifier trained on real days only, at least 80 % of the time', () => {
    const features = (day: WeatherDay) => CONTINUOUS.map((field) => day[field]);
    const classifier = fitLogisticRegression(days.map(features), days.map((day) => WEATHER.indexOf(day.weather as never)), WEATHER.length);
    const snow = WEATHER.indexOf('snow');
    const snowRate = (set: readonly WeatherDay[]) => set.filter((day) => classifier.predict(features(day)) === snow).length / set.length;
    // For scale: the classifier labels 23 of the 26 real snow days (88 %) snow; synthetic ones: 87 %.
    expect(snowRate(snowDays)).toBeGreaterThanOrEqual(0.8);
    expect(snowRate(synthetic)).toBeGreaterThanOrEqual(0.8);
  });

  it('never copies a real day, not even in the learned fields alone', () => {
    const whole = (day: WeatherDay) => JSON.stringify([day.date, ...CONTINUOUS.map((field) => day[field]), day.weather]);
    const learned = (day: WeatherDay) => JSON.stringify(CONTINUOUS.map((field) => day[field]));
    const realWhole = new Set(days.map(whole));
    const realLearned = new Set(days.map(learned));
    expect(synthetic.filter((day) => realWhole.has(whole(day)))).toEqual([]);
    expect(synthetic.filter((day) => realLearned.has(learned(day)))).toEqual([]);
  });
});

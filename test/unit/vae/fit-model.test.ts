import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import { fitModel, type FitResult } from '../../../model/fit.js';
import { createPrng } from '../../../model/random.js';
import { synthesize, type SynthesisSource } from '../../../model/synthesize.js';
import { loadTrainedModel, type TrainedModel } from '../../../model/trained-model.js';
import { saveModel } from '../../../model/vae/index.js';

// Invented scenario: hive scales report weight and brood temperature; the beekeeper's note on the
// hive's state is the class ("swarming" is rare), sometimes left empty.
const hiveSchema = {
  type: 'record',
  name: 'HiveReading',
  namespace: 'test.raretide.hives',
  fields: [
    { name: 'reading_id', type: 'string' },
    { name: 'weight_kg', type: 'double' },
    { name: 'brood_temp', type: 'double' },
    { name: 'state', type: ['null', 'string'] },
  ],
};

type HiveReading = { reading_id: string; weight_kg: number; brood_temp: number; state: string | null };

function hiveReadings(count: number): HiveReading[] {
  const prng = createPrng(17);
  return Array.from({ length: count }, (_, i) => {
    const swarming = i % 20 === 7;
    return {
      reading_id: `R-${String(100000 + i)}`,
      weight_kg: (swarming ? 31 : 38) + 2 * prng.normal(),
      brood_temp: (swarming ? 36.4 : 34.8) + 0.5 * prng.normal(),
      // Every 50th note left empty; "queenless" first appears after the codec's sample.
      state: i % 50 === 3 ? null : swarming ? 'swarming' : i >= 300 && i % 10 === 1 ? 'queenless' : 'calm',
    };
  });
}

const readings = hiveReadings(400);
const training = { hidden: [16], latent: 2, epochs: 4, batchSize: 64, seed: 3 };
let workspace = '';
let fitted: FitResult;
let model: TrainedModel;

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-fit-model-'));
  fitted = await fitModel({
    schema: hiveSchema,
    records: (async function* () {
      yield* readings;
    })(),
    labelPath: 'state',
    policies: { reading_id: 'fresh' },
    training,
    codecSampleSize: 300,
  });
  await saveModel(join(workspace, 'hives'), fitted.bundle);
  model = await loadTrainedModel(join(workspace, 'hives'));
});

afterAll(async () => {
  model?.dispose();
  fitted?.dispose();
  await rm(workspace, { recursive: true, force: true });
});

describe('fitModel', () => {
  it('trains on records with a known class and counts the ones it skips', () => {
    const missing = readings.filter((r) => r.state === null).length;
    const queenless = readings.filter((r) => r.state === 'queenless').length;
    expect(fitted.records).toEqual({
      read: 400,
      trained: 400 - missing - queenless,
      missingLabel: missing,
      unknownLabel: queenless,
      perClass: {
        calm: readings.filter((r) => r.state === 'calm').length,
        swarming: readings.filter((r) => r.state === 'swarming').length,
      },
    });
    expect(fitted.bundle.trained.classNames).toEqual(['calm', 'swarming']);
    expect(fitted.bundle.trained.curve).toHaveLength(4);
    expect(model.records).toEqual(fitted.records);
  });

  it('refuses a source without records or without any labelled record', async () => {
    await expect(fitModel({ schema: hiveSchema, records: [], labelPath: 'state' })).rejects.toThrow(/at least one record/);
    const unlabelled = readings.slice(0, 5).map((r) => ({ ...r, state: null }));
    await expect(fitModel({ schema: hiveSchema, records: unlabelled, labelPath: 'state' })).rejects.toThrow(/label field `state`/);
  });
});

describe('loadTrainedModel', () => {
  it('refuses a stored fingerprint that is not the stored schema', async () => {
    const attachments = { ...fitted.bundle.attachments, schemaFingerprint: '0000000000000000' };
    const directory = join(workspace, 'wrong-fingerprint');
    await saveModel(directory, { ...fitted.bundle, attachments });
    const failure: unknown = await loadTrainedModel(directory).catch((error: unknown) => error);
    expect(failure).toBeInstanceOf(RaretideError);
    expect((failure as RaretideError).code).toBe('model.corrupt');
    expect((failure as RaretideError).message).toContain(`fingerprint ${model.schemaFingerprint} but the manifest records 0000000000000000`);
  });

  it('refuses a model directory that fit did not write', async () => {
    const directory = join(workspace, 'bare');
    await saveModel(directory, { ...fitted.bundle, attachments: {} });
    await expect(loadTrainedModel(directory)).rejects.toMatchObject({ code: 'model.incomplete', message: /not written by `raretide fit`/ });
  });
});

describe('synthesize', () => {
  const swarming = readings.filter((r) => r.state === 'swarming').slice(0, 6);
  const sources: SynthesisSource[] = swarming.map((record, i) => ({
    record,
    className: 'swarming',
    key: { topic: 'apiary.readings', partition: 0, offset: 1000 + i },
    k: 4,
  }));

  it('returns valid, guarded variants with fresh ids, the same for the same inputs', () => {
    const options = { temperature: 1, seed: 11 };
    const first = synthesize(model, sources, options);
    expect(synthesize(model, sources, options)).toEqual(first);
    expect(first.counts).toMatchObject({ requested: 24, unknownClass: 0, invalid: 0, checked: 24 });
    expect(first.counts.kept).toBe(first.records.length);
    expect(first.counts.kept + first.counts.exactCopies + first.counts.nearSource).toBe(24);
    for (const { sourceIndex, record } of first.records) {
      expect(model.schemaType.isValid(record)).toBe(true);
      expect(record.state).toBe('swarming');
      expect(record.reading_id).toMatch(/^R-\d{6}$/);
      expect(record.reading_id).not.toBe(swarming[sourceIndex]!.reading_id);
    }
    expect(synthesize(model, sources, { ...options, seed: 12 }).records).not.toEqual(first.records);
  });

  it('regenerates variant i alone and counts sources of classes the model does not know', () => {
    const all = synthesize(model, sources.slice(0, 1), { temperature: 1, seed: 11, privacyGuard: { scope: 'off', minDistance: 0 } });
    const third = synthesize(model, [{ ...sources[0]!, k: 1, firstSampleIndex: 2 }], { temperature: 1, seed: 11, privacyGuard: { scope: 'off', minDistance: 0 } });
    expect(third.records).toEqual(all.records.filter((r) => r.sampleIndex === 2));
    const unknown = synthesize(model, [{ ...sources[0]!, className: 'queenless' }], { temperature: 1, seed: 11 });
    expect(unknown.records).toEqual([]);
    expect(unknown.counts).toMatchObject({ unknownClass: 1, requested: 0 });
  });
});

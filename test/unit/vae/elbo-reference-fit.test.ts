import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { driftScorerFor } from '../../../model/drift/live-scorer.js';
import { DRIFT_REFERENCE_ATTACHMENT, MIN_HELD_OUT_ROWS, readDriftReference } from '../../../model/drift/reference.js';
import { fitModel, type FitResult } from '../../../model/fit.js';
import { createPrng } from '../../../model/random.js';
import { loadTrainedModel } from '../../../model/trained-model.js';
import { computeModelId, saveModel } from '../../../model/vae/index.js';

// Invented scenario: greenhouse benches report air humidity and soil moisture; a grower's flag marks
// the rare benches with a failing drip line.
const benchSchema = {
  type: 'record',
  name: 'BenchReading',
  namespace: 'test.raretide.greenhouse',
  fields: [
    { name: 'humidity', type: 'double' },
    { name: 'soil_moisture', type: 'double' },
    { name: 'flag', type: 'string' },
  ],
};

function benchReadings(count: number): { humidity: number; soil_moisture: number; flag: string }[] {
  const prng = createPrng(23);
  return Array.from({ length: count }, (_, i) => {
    const failing = i % 12 === 5;
    return { humidity: 62 + 4 * prng.normal(), soil_moisture: (failing ? 18 : 34) + 3 * prng.normal(), flag: failing ? 'drip_failure' : 'ok' };
  });
}

const training = { hidden: [16], latent: 2, epochs: 4, batchSize: 64, seed: 3 };
let workspace = '';
let large: FitResult;
let small: FitResult;

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-drift-reference-'));
  // 10 % of each class is held out, rounded down: 1,200 records (100 failing) hold out 110 + 10 = 120
  // ≥ MIN_HELD_OUT_ROWS; 300 records (25 failing) hold out 27 + 2 = 29.
  large = await fitModel({ schema: benchSchema, records: benchReadings(1200), labelPath: 'flag', training });
  small = await fitModel({ schema: benchSchema, records: benchReadings(300), labelPath: 'flag', training });
}, 120_000);

afterAll(async () => {
  large?.dispose();
  small?.dispose();
  await rm(workspace, { recursive: true, force: true });
});

describe('fitModel drift reference', () => {
  it('stores quantiles of the held-out rows, or of every fitted row when too few were held out', () => {
    const held = large.bundle.attachments[DRIFT_REFERENCE_ATTACHMENT];
    expect(held).toMatchObject({ rows: 'held-out', count: 120 });
    expect(120).toBeGreaterThanOrEqual(MIN_HELD_OUT_ROWS);
    expect(29).toBeLessThan(MIN_HELD_OUT_ROWS);
    expect(small.bundle.attachments[DRIFT_REFERENCE_ATTACHMENT]).toMatchObject({ rows: 'fitted', count: 300 });
  });

  it('is part of the content-hashed model: the same bundle keeps its id, another reference changes it', () => {
    const id = computeModelId(large.bundle);
    expect(computeModelId(large.bundle)).toBe(id);
    const reference = readDriftReference(large.bundle.attachments, 'in memory')!;
    const edited = { ...large.bundle, attachments: { ...large.bundle.attachments, [DRIFT_REFERENCE_ATTACHMENT]: { ...reference, p99: reference.p99 + 1 } } };
    expect(computeModelId(edited)).not.toBe(id);
  });

  it('loads back with its reference, and a model fitted before references existed still loads without one', async () => {
    const current = join(workspace, 'current');
    await saveModel(current, large.bundle);
    const loaded = await loadTrainedModel(current);
    try {
      expect(driftScorerFor(loaded)?.reference).toEqual(large.bundle.attachments[DRIFT_REFERENCE_ATTACHMENT]);
    } finally {
      loaded.dispose();
    }
    const { [DRIFT_REFERENCE_ATTACHMENT]: _dropped, ...olderAttachments } = large.bundle.attachments;
    const older = join(workspace, 'older');
    await saveModel(older, { ...large.bundle, attachments: olderAttachments });
    const old = await loadTrainedModel(older);
    try {
      expect(driftScorerFor(old)).toBeUndefined();
      expect(old.classNames).toEqual(['drip_failure', 'ok']);
    } finally {
      old.dispose();
    }
  });
});

/**
 * Why planned synthetic records were not emitted, per class: refused by a schema (`invalid`: the model's
 * decode invalid under the record schema, or refused by the output schema) apart from the privacy guard's
 * drops (`guard`), from the model call through the core's accounting to the worker's skip-reason counter.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { RawFraming } from '../../../connector/avro/raw-framing.js';
import { WorkerMetrics } from '../../../connector/ops/worker-metrics.js';
import { BalanceController } from '../../../connector/pipeline/balance.js';
import { PipelineCore } from '../../../connector/pipeline/core.js';
import { KeyedUniform } from '../../../connector/pipeline/keyed-uniform.js';
import { ModelSynthesizer } from '../../../connector/pipeline/model-synthesizer.js';
import type { SynthesisRequest } from '../../../connector/pipeline/synthesizer.js';
import { fitModel } from '../../../model/fit.js';
import { loadTrainedModel, type TrainedModel } from '../../../model/trained-model.js';
import { saveModel } from '../../../model/vae/index.js';
import { FakeSynthesizer, messagesOf, SORTER_EVENT_SCHEMA, sorterDecoder, sorterEvents, sorterSchema, type SorterEvent } from './support/sorter-events.js';

const TOPIC = 'sorter.events';

function sampleValue(text: string, series: string): number | undefined {
  const line = text.split('\n').find((candidate) => candidate.startsWith(`${series} `));
  return line === undefined ? undefined : Number(line.slice(series.length + 1));
}

describe('skip reasons per class', () => {
  it('counts schema-refused variants of each class as invalid, apart from the privacy guard drops', async () => {
    // Of k = 5 per rare record: sample 0 too close (guard), 1 refused by the model's record-schema check,
    // 2 refused by the output schema (its lane is no int), 3 and 4 emitted.
    const synthesizer = new FakeSynthesizer({ dropSampleIndices: [0], modelInvalidSampleIndices: [1], invalidSampleIndices: [2] });
    const balance = new BalanceController({ targets: { jam: 0.4, misroute: 0.4 }, maxPerRecord: 5, counting: { mode: 'cumulative' } }, new KeyedUniform(7));
    balance.assign({ topic: TOPIC, partition: 0 });
    const core = new PipelineCore({
      decoder: sorterDecoder(),
      outputFraming: new RawFraming(sorterSchema),
      label: { from: 'field', path: 'outcome' },
      balance,
      synthesizer,
      sampling: { seed: 7, temperature: 0.8 },
      includeOriginals: false,
      clock: { now: () => 0 },
    });
    // 40 ok records, then a jam and a misroute: far below target, so each gets the cap k = 5.
    const events = sorterEvents(40, {}, 1);
    events.push({ ...events[0]!, parcelId: 'Pjam', outcome: 'jam' }, { ...events[1]!, parcelId: 'Pmis', outcome: 'misroute' }, { ...events[2]!, parcelId: 'Pjam2', outcome: 'jam' });
    const { accounting } = await core.processBatch(messagesOf(events, 1, TOPIC));

    expect(accounting.byClass.jam).toMatchObject({ planned: 10, synthetic: 4, guardDropped: 6, invalid: 4 });
    expect(accounting.byClass.misroute).toMatchObject({ planned: 5, synthetic: 2, guardDropped: 3, invalid: 2 });
    expect(accounting.guardDrops).toEqual({ exactCopies: 0, nearSource: 3, nearClassRow: 0, invalid: 6 });

    const metrics = new WorkerMetrics();
    metrics.recordBatch(accounting);
    const text = metrics.registry.render();
    expect(sampleValue(text, 'raretide_synthetic_skipped_total{class="jam",reason="invalid"}')).toBe(4);
    expect(sampleValue(text, 'raretide_synthetic_skipped_total{class="jam",reason="guard"}')).toBe(2);
    expect(sampleValue(text, 'raretide_synthetic_skipped_total{class="misroute",reason="invalid"}')).toBe(2);
    expect(sampleValue(text, 'raretide_synthetic_skipped_total{class="misroute",reason="guard"}')).toBe(1);
  });
});

describe('ModelSynthesizer — schema-invalid decodes by class', () => {
  let workspace = '';
  let model: TrainedModel;

  beforeAll(async () => {
    workspace = await mkdtemp(join(tmpdir(), 'raretide-skip-reasons-'));
    const fitted = await fitModel({
      schema: SORTER_EVENT_SCHEMA,
      records: sorterEvents(2000, { jam: 0.05, misroute: 0.05 }, 31) as never,
      labelPath: 'outcome',
      training: { hidden: [16], latent: 2, epochs: 3, batchSize: 256, seed: 3 },
    });
    await saveModel(join(workspace, 'model'), fitted.bundle);
    fitted.dispose();
    model = await loadTrainedModel(join(workspace, 'model'));
  }, 60_000);

  afterAll(async () => {
    model?.dispose();
    await rm(workspace, { recursive: true, force: true });
  });

  /** The model, with a record schema that refuses decodes on odd lanes (a stand-in: real decodes are always valid). */
  function refusingOddLanes(): TrainedModel {
    const schemaType = Object.create(model.schemaType) as TrainedModel['schemaType'];
    schemaType.isValid = (record: unknown) => (record as SorterEvent).lane % 2 === 0;
    return { ...model, schemaType };
  }

  function requests(events: readonly SorterEvent[]): SynthesisRequest[] {
    return events.map((event, index) => ({ record: event as never, label: event.outcome!, key: { topic: TOPIC, partition: 0, offset: BigInt(index) }, k: 5 }));
  }

  it('splits the invalid count by class, each class as a call of its requests alone counts it', () => {
    const rare = sorterEvents(400, { jam: 0.5, misroute: 0.5 }, 32).filter((event) => event.outcome !== 'ok').slice(0, 24);
    const synthesizer = new ModelSynthesizer(refusingOddLanes(), { scope: 'off', minDistance: 0.05 });
    const options = { temperature: 1, seed: 5 };
    const mixed = requests(rare);
    const result = synthesizer.synthesize(mixed, options);

    const byClass = result.invalidByClass!;
    expect([byClass.jam, byClass.misroute].every((count) => count! > 0)).toBe(true);
    expect(byClass.jam! + byClass.misroute!).toBe(result.dropped.invalid);
    for (const label of ['jam', 'misroute']) {
      const alone = synthesizer.synthesize(mixed.filter((request) => request.label === label), options);
      expect(byClass[label]).toBe(alone.dropped.invalid);
    }
    // Every variant asked for is either kept or counted once among the drops.
    const kept = result.variants.reduce((sum, variants) => sum + variants.length, 0);
    const { exactCopies, nearSource, nearClassRow, invalid } = result.dropped;
    expect(kept + exactCopies + nearSource + nearClassRow + invalid).toBe(5 * mixed.length);
  });

  it('reports zero for every class when no decode is invalid', () => {
    const rare = sorterEvents(200, { jam: 0.5, misroute: 0.5 }, 33).filter((event) => event.outcome !== 'ok').slice(0, 8);
    const result = new ModelSynthesizer(model, { scope: 'off', minDistance: 0.05 }).synthesize(requests(rare), { temperature: 1, seed: 5 });
    expect(result.dropped.invalid).toBe(0);
    expect(result.invalidByClass).toEqual({ jam: 0, misroute: 0 });
  });
});

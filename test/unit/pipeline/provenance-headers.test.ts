/**
 * The emit stage's header writer is a fast path of `toHeaders`: for every tag it must write the same
 * headers (names, text values, order) and refuse the same malformed tags. Differential test against
 * the reference over random tags.
 */
import { describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import { toHeaders, type SourceCoordinates } from '../../../connector/pipeline/provenance.js';
import { ProvenanceHeaderWriter, type SyntheticRun } from '../../../connector/pipeline/provenance-headers.js';
import { seededUniform } from './seeded-uniform.js';

describe('ProvenanceHeaderWriter', () => {
  it('writes what toHeaders writes, for originals and synthetic records of random sources and runs', () => {
    const random = seededUniform(41);
    const pick = <T>(values: readonly T[]): T => values[Math.floor(random.uniform() * values.length)]!;
    for (let batch = 0; batch < 50; batch++) {
      const run: SyntheticRun = {
        modelId: pick(['9c1e5f0a7b3d2e64', 'a', 'model-ü']),
        seed: pick([0n, 1n, 2n ** 64n - 1n, BigInt(Math.floor(random.uniform() * 2 ** 53))]),
        temperature: pick([0.8, 1, 1e-7, 123.456, random.uniform() + 0.01]),
      };
      const writer = new ProvenanceHeaderWriter(run);
      for (let record = 0; record < 40; record++) {
        const source: SourceCoordinates = {
          topic: pick(['parcel-scans', 'a.b_c-d', 'orders']),
          partition: pick([0, 1, 7, 2 ** 31 - 1]),
          offset: pick([0n, 1_048_576n, 2n ** 63n - 1n, BigInt(Math.floor(random.uniform() * 1e12))]),
        };
        const headers = writer.source(source);
        expect(writer.original(headers)).toEqual(toHeaders({ kind: 'original', source }));
        for (const sampleIndex of [0, 1, 4, pick([5, 99, 2 ** 31 - 1])]) {
          expect(writer.synthetic(headers, sampleIndex)).toEqual(toHeaders({ kind: 'synthetic', source, sampleIndex, ...run }));
        }
      }
    }
  });

  it('refuses the malformed tags toHeaders refuses, with the same error code', () => {
    const run: SyntheticRun = { modelId: 'm', seed: 1n, temperature: 0.8 };
    const good: SourceCoordinates = { topic: 't', partition: 0, offset: 0n };
    const sources: SourceCoordinates[] = [
      { ...good, topic: '' },
      { ...good, partition: -1 },
      { ...good, partition: 1.5 },
      { ...good, partition: 2 ** 31 },
      { ...good, offset: -1n },
      { ...good, offset: 2n ** 63n },
    ];
    for (const source of sources) {
      expect(() => toHeaders({ kind: 'original', source })).toThrow(RaretideError);
      expect(() => new ProvenanceHeaderWriter(run).source(source)).toThrow(expect.objectContaining({ code: 'provenance.bad-tag' }));
    }
    const writer = new ProvenanceHeaderWriter(run);
    for (const sampleIndex of [-1, 0.5, 2 ** 31]) {
      expect(() => writer.synthetic(writer.source(good), sampleIndex)).toThrow(expect.objectContaining({ code: 'provenance.bad-tag' }));
    }
    for (const bad of [{ ...run, modelId: '' }, { ...run, seed: -1n }, { ...run, seed: 2n ** 64n }, { ...run, temperature: 0 }, { ...run, temperature: Number.NaN }]) {
      const badWriter = new ProvenanceHeaderWriter(bad);
      // Originals need none of the run's values, as with toHeaders.
      expect(badWriter.original(badWriter.source(good))).toEqual(toHeaders({ kind: 'original', source: good }));
      expect(() => badWriter.synthetic(badWriter.source(good), 0)).toThrow(expect.objectContaining({ code: 'provenance.bad-tag' }));
    }
  });
});

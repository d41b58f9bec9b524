/**
 * The generators compared in a report, all run on the same real rare records of the train split and
 * asked for k records per record: `none` makes nothing; `duplication` repeats each record k times
 * (so every one is a copy by construction); `smote` and `gaussian-copula` work in the feature
 * codec's space and decode with the codec, taking copied fields from the record they stand for;
 * `vae` is the product itself (`synthesize`, privacy guard at its default), which may keep fewer.
 */
import type { AvroRecord } from '../../features/avro-types.js';
import type { Seed } from '../../random.js';
import { synthesize } from '../../synthesize.js';
import type { TrainedModel } from '../../trained-model.js';
import { evaluationStream } from '../evaluation-streams.js';
import type { FeatureRows } from '../feature-rows.js';
import type { GeneratorName } from '../quality-report.js';
import { GaussianCopula } from './gaussian-copula.js';
import { smote } from './smote.js';

/** Topic name keying the VAE's streams for train record i (offset i): never a real topic. */
export const EVALUATION_SOURCE_TOPIC = 'raretide.evaluate.train';

export interface RareClassTrain {
  readonly className: string;
  readonly records: readonly AvroRecord[];
  readonly features: FeatureRows;
  /** Each record's index in the train split. */
  readonly trainIndices: readonly number[];
}

export interface GeneratorSettings {
  readonly model: TrainedModel;
  readonly k: number;
  readonly temperature: number;
  readonly seed: Seed;
}

export interface GeneratedClass {
  readonly records: readonly AvroRecord[];
  /** For each record, the index in the class's real records of the record it was made from. */
  readonly sources: Int32Array;
}

/** Synthetic records per rare class, in the order of `rare`. */
export type GeneratedRecords = ReadonlyMap<string, GeneratedClass>;

export function generate(generator: GeneratorName, rare: readonly RareClassTrain[], settings: GeneratorSettings): GeneratedRecords {
  switch (generator) {
    case 'none':
      return new Map(rare.map(({ className }) => [className, { records: [], sources: new Int32Array(0) }]));
    case 'duplication':
      return new Map(
        rare.map(({ className, records }) => {
          const sources = Int32Array.from({ length: records.length * settings.k }, (_, s) => Math.floor(s / settings.k));
          return [className, { records: Array.from(sources, (source) => records[source]!), sources }];
        }),
      );
    case 'smote':
      return new Map(
        rare.map((group) => {
          const made = smote(group.features, settings.k, evaluationStream(settings.seed, `smote/${group.className}`));
          return [group.className, decodeRows(made.rows, made.sources, group, 'smote', settings)];
        }),
      );
    case 'gaussian-copula':
      return new Map(
        rare.map((group) => {
          const copula = GaussianCopula.fit(settings.model.codec.layout, group.features);
          const rows = copula.sample(group.records.length * settings.k, evaluationStream(settings.seed, `gaussian-copula/${group.className}`));
          // Sample s stands for record ⌊s / k⌋, which lends it its copied fields.
          const sources = Int32Array.from({ length: rows.count }, (_, s) => Math.floor(s / settings.k));
          return [group.className, decodeRows(rows, sources, group, 'gaussian-copula', settings)];
        }),
      );
    case 'vae':
      return vaeRecords(rare, settings);
  }
}

function decodeRows(rows: FeatureRows, sources: Int32Array, group: RareClassTrain, generator: GeneratorName, settings: GeneratorSettings): GeneratedClass {
  const fresh = evaluationStream(settings.seed, `${generator}/${group.className}/fresh`);
  const random = () => fresh.uniform();
  return {
    records: Array.from({ length: rows.count }, (_, i) => settings.model.codec.decode(rows.values, group.records[sources[i]!]!, { row: i, random })),
    sources,
  };
}

function vaeRecords(rare: readonly RareClassTrain[], settings: GeneratorSettings): GeneratedRecords {
  const sources = rare.flatMap(({ className, records, trainIndices }) =>
    records.map((record, i) => ({ record, className, indexInClass: i, key: { topic: EVALUATION_SOURCE_TOPIC, partition: 0, offset: trainIndices[i]! }, k: settings.k })),
  );
  const result = synthesize(settings.model, sources, { temperature: settings.temperature, seed: settings.seed });
  const byClass = new Map(rare.map(({ className }) => [className, { records: [] as AvroRecord[], sources: [] as number[] }]));
  for (const { sourceIndex, record } of result.records) {
    const source = sources[sourceIndex]!;
    const made = byClass.get(source.className)!;
    made.records.push(record);
    made.sources.push(source.indexInClass);
  }
  return new Map([...byClass].map(([className, made]) => [className, { records: made.records, sources: Int32Array.from(made.sources) }]));
}

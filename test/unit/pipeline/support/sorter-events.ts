/**
 * Invented test scenario: a parcel-sorting line emits one Avro event per parcel; `jam` and `misroute`
 * are the rare outcomes a downstream classifier needs more of. Everything here is made up.
 */
import { knownSchema, type KnownSchema } from '../../../../connector/avro/known-schema.js';
import { PayloadDecoder } from '../../../../connector/avro/payload-decoder.js';
import { RawFraming } from '../../../../connector/avro/raw-framing.js';
import { BalanceController } from '../../../../connector/pipeline/balance.js';
import { PipelineCore, type PipelineCoreOptions } from '../../../../connector/pipeline/core.js';
import { KeyedUniform } from '../../../../connector/pipeline/keyed-uniform.js';
import type { InputMessage } from '../../../../connector/pipeline/source-sink.js';
import type { TopicPartition } from '../../../../connector/pipeline/topic-partition.js';
import type { SynthesisOptions, SynthesisRequest, SynthesisResult, Synthesizer, SyntheticVariant } from '../../../../connector/pipeline/synthesizer.js';
import { seededRandom } from '../../../support/seeded-random.js';

export const SORTER_EVENT_SCHEMA = {
  type: 'record',
  name: 'SorterEvent',
  namespace: 'dev.raretide.demo.sorter',
  fields: [
    { name: 'parcelId', type: 'string' },
    { name: 'lane', type: 'int' },
    { name: 'weightKg', type: 'double' },
    { name: 'beltSpeed', type: 'double' },
    // `retired` is a class the models in these tests never learn; null is a missing label.
    { name: 'outcome', type: ['null', { type: 'enum', name: 'Outcome', symbols: ['ok', 'jam', 'misroute', 'retired'] }], default: null },
  ],
} as const;

export const sorterSchema: KnownSchema = knownSchema(SORTER_EVENT_SCHEMA, 'sorter-event.avsc');

export interface SorterEvent {
  parcelId: string;
  lane: number;
  weightKg: number;
  beltSpeed: number;
  outcome: 'ok' | 'jam' | 'misroute' | 'retired' | null;
}

/** Events with `outcome` drawn from `mix` (class → probability, the rest `ok`); jams are heavy and slow. */
export function sorterEvents(count: number, mix: Readonly<Record<string, number>>, seed: number): SorterEvent[] {
  const random = seededRandom(seed);
  return Array.from({ length: count }, (_, index) => {
    let draw = random();
    let outcome: SorterEvent['outcome'] = 'ok';
    for (const [label, probability] of Object.entries(mix)) {
      if (draw < probability) {
        outcome = label as SorterEvent['outcome'];
        break;
      }
      draw -= probability;
    }
    const jam = outcome === 'jam' ? 1 : 0;
    return {
      parcelId: `P${(100_000 + index).toString(36)}`,
      lane: Math.floor(random() * 8),
      weightKg: Math.round((2 + 6 * random() + 5 * jam) * 1000) / 1000,
      beltSpeed: Math.round((1.8 - 0.9 * jam + 0.2 * random()) * 1000) / 1000,
      outcome,
    };
  });
}

/** Raw-framed messages of `events`, spread round-robin over `partitions`, keyed by parcel id. */
export function messagesOf(events: readonly SorterEvent[], partitions = 1, topic = 'sorter.events', firstIndex = 0): InputMessage[] {
  return events.map((event, index) => {
    const position = firstIndex + index;
    return {
      topic,
      partition: position % partitions,
      offset: BigInt(Math.floor(position / partitions)),
      value: sorterSchema.type.toBuffer(event),
      key: Buffer.from(event.parcelId),
      headers: [],
      timestamp: 1_700_000_000_000 + position,
    };
  });
}

export function sorterDecoder(): PayloadDecoder {
  return new PayloadDecoder(new RawFraming(sorterSchema));
}

export interface SorterPipelineOptions {
  /** @default {jam: 0.1} */
  readonly targets?: Readonly<Record<string, number>>;
  /** The run's seed, and the balance controller's rounding seed. */
  readonly seed: number;
  readonly temperature: number;
  readonly includeOriginals: boolean;
  readonly originalsAsRead?: boolean;
  readonly onDecoded?: PipelineCoreOptions['onDecoded'];
  /** A partition to assign to the balance controller at once. @default none */
  readonly assign?: TopicPartition;
}

/**
 * The pipeline core over sorter events with the fake synthesizer, raw framing in and out, labels from
 * `outcome`, cumulative counts with k ≤ 5 and a clock that stands still.
 */
export function sorterPipeline(options: SorterPipelineOptions): { core: PipelineCore; balance: BalanceController } {
  const balance = new BalanceController({ targets: options.targets ?? { jam: 0.1 }, maxPerRecord: 5, counting: { mode: 'cumulative' } }, new KeyedUniform(options.seed));
  if (options.assign !== undefined) balance.assign(options.assign);
  const core = new PipelineCore({
    decoder: sorterDecoder(),
    outputFraming: new RawFraming(sorterSchema),
    label: { from: 'field', path: 'outcome' },
    balance,
    synthesizer: new FakeSynthesizer(),
    sampling: { seed: options.seed, temperature: options.temperature },
    includeOriginals: options.includeOriginals,
    ...(options.originalsAsRead === undefined ? {} : { originalsAsRead: options.originalsAsRead }),
    ...(options.onDecoded === undefined ? {} : { onDecoded: options.onDecoded }),
    clock: { now: () => 0 },
  });
  return { core, balance };
}

export interface FakeSynthesizerOptions {
  /** Variants with these sample indices are dropped, as a privacy guard would. @default [] */
  readonly dropSampleIndices?: readonly number[];
  /** Variants with these sample indices come back invalid for the schema. @default [] */
  readonly invalidSampleIndices?: readonly number[];
  /** Variants with these sample indices are dropped as the model's own schema check would, counted by class. @default [] */
  readonly modelInvalidSampleIndices?: readonly number[];
}

/**
 * A deterministic stand-in for the model: variant i of a record nudges its weight by (i+1) grams.
 * It records every call so tests can count model calls per batch.
 */
export class FakeSynthesizer implements Synthesizer {
  readonly modelId = '0123456789abcdef';
  readonly classes = ['ok', 'jam', 'misroute'];
  readonly calls: { requests: readonly SynthesisRequest[]; options: SynthesisOptions }[] = [];

  constructor(private readonly options: FakeSynthesizerOptions = {}) {}

  synthesize(requests: readonly SynthesisRequest[], options: SynthesisOptions): SynthesisResult {
    this.calls.push({ requests, options });
    const drop = new Set(this.options.dropSampleIndices ?? []);
    const invalid = new Set(this.options.invalidSampleIndices ?? []);
    const modelInvalid = new Set(this.options.modelInvalidSampleIndices ?? []);
    let nearSource = 0;
    const invalidByClass: Record<string, number> = {};
    const variants = requests.map((request) => {
      const kept: SyntheticVariant[] = [];
      invalidByClass[request.label] ??= 0;
      for (let sampleIndex = 0; sampleIndex < request.k; sampleIndex++) {
        if (drop.has(sampleIndex)) {
          nearSource += 1;
          continue;
        }
        if (modelInvalid.has(sampleIndex)) {
          invalidByClass[request.label] = (invalidByClass[request.label] ?? 0) + 1;
          continue;
        }
        const source = request.record as unknown as SorterEvent;
        const record = invalid.has(sampleIndex) ? { ...source, lane: 'not a lane' } : { ...source, weightKg: source.weightKg + (sampleIndex + 1) / 1000 };
        kept.push({ sampleIndex, record });
      }
      return kept;
    });
    const modelInvalidTotal = Object.values(invalidByClass).reduce((sum, count) => sum + count, 0);
    return { variants, dropped: { exactCopies: 0, nearSource, nearClassRow: 0, invalid: modelInvalidTotal }, invalidByClass };
  }
}

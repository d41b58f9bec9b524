/**
 * Makes synthetic records again from their provenance tags, through the steps a replay made them by:
 * the core's decode stage (unframe, decode, label) on the source record, `model/synthesize.ts` (the
 * function behind `ModelSynthesizer`) with the tag's seed and temperature, and the core's guard stage
 * (encode with the output framing). A variant's random draws depend on its key and sample index only
 * (model/vae/sampler.ts), so variant i made alone, from `firstSampleIndex` i, equals variant i of the
 * replay's batch.
 */
import { UsageError } from '../../../config/errors.js';
import type { LabelConfig } from '../../../config/sections/label.js';
import type { PrivacyGuardConfig } from '../../../config/sections/model.js';
import type { AvroRecord } from '../../../model/features/avro-types.js';
import { synthesize, type SynthesisSource } from '../../../model/synthesize.js';
import type { TrainedModel } from '../../../model/trained-model.js';
import type { Framing } from '../../avro/framing.js';
import type { KnownSchema } from '../../avro/known-schema.js';
import { PayloadDecoder } from '../../avro/payload-decoder.js';
import { renderProblem } from '../../avro/problems.js';
import { RawFraming } from '../../avro/raw-framing.js';
import { decodeStage } from '../../pipeline/decode-stage.js';
import { guardStage } from '../../pipeline/guard-stage.js';
import { labelReader, type LabelReader } from '../../pipeline/label.js';
import type { SyntheticTag } from '../../pipeline/provenance.js';
import type { InputMessage } from '../../pipeline/source-sink.js';
import type { RecordValue, SyntheticVariant } from '../../pipeline/synthesizer.js';
import { describeVariant } from './tag-input.js';

/** One source record and the tags of the variants to make of it. */
export interface RegenerationJob {
  readonly message: InputMessage;
  readonly tags: readonly SyntheticTag[];
}

export type Regenerated =
  | { readonly ok: true; readonly record: RecordValue; readonly payload: Buffer }
  | { readonly ok: false; readonly reason: string };

export interface RegeneratorSettings {
  readonly model: TrainedModel;
  readonly privacyGuard: PrivacyGuardConfig;
  readonly label: LabelConfig;
  /** The schema records are read and written as (what the replay used). */
  readonly reader: KnownSchema;
  /** How the input's payloads are framed (a file's: raw, with its writer schema). */
  readonly inputFraming: Framing;
}

export class Regenerator {
  private readonly decoder: PayloadDecoder;
  private readonly readLabel: LabelReader;
  private readonly outputFraming: RawFraming;

  constructor(private readonly settings: RegeneratorSettings) {
    this.decoder = new PayloadDecoder(settings.inputFraming, { reader: settings.reader });
    this.readLabel = labelReader(settings.label, settings.model.classNames);
    this.outputFraming = new RawFraming(settings.reader);
  }

  get modelId(): string {
    return this.settings.model.id;
  }

  /** Refuses a tag of another model: its noise streams are keyed by that model's id. */
  checkModel(modelId: string, where: string): void {
    const { model } = this.settings;
    if (modelId === model.id) return;
    throw new UsageError(
      `${where} was made by model ${modelId}, but the loaded model (${model.directory}) is ${model.id}; ` +
        'pass the model directory that wrote it (--model-dir <dir>, or model.dir in the config).',
      { code: 'regenerate.model-mismatch' },
    );
  }

  /** Per job, per tag in order: the remade record and its output bytes, or why there is none. */
  async regenerate(jobs: readonly RegenerationJob[]): Promise<Regenerated[][]> {
    for (const job of jobs) for (const tag of job.tags) this.checkModel(tag.modelId, `The synthetic record ${describeVariant(tag)}`);
    const entries = await decodeStage(jobs.map((job) => job.message), this.decoder, this.readLabel);
    const results: Regenerated[][] = jobs.map((job) => job.tags.map(() => ({ ok: false, reason: 'not regenerated' })));

    // One model call per (seed, temperature); a replay's output has a single one.
    const groups = new Map<string, { seed: bigint; temperature: number; sources: SynthesisSource[]; slots: { job: number; first: number }[] }>();
    entries.forEach((entry, jobIndex) => {
      const job = jobs[jobIndex]!;
      if (entry.kind === 'rejected') {
        const reason = `its source record ${entry.message.topic}:${entry.message.partition}@${entry.message.offset} is a dead letter now (${renderProblem(entry.problem)})`;
        results[jobIndex] = job.tags.map(() => ({ ok: false, reason }));
        return;
      }
      for (const [key, tags] of groupTags(job.tags)) {
        const { seed, temperature } = tags[0]!;
        const group = groups.get(key) ?? { seed, temperature, sources: [], slots: [] };
        groups.set(key, group);
        const indices = tags.map((tag) => tag.sampleIndex);
        const first = Math.min(...indices);
        group.sources.push({
          record: entry.record as AvroRecord,
          className: entry.label,
          key: { topic: tags[0]!.source.topic, partition: tags[0]!.source.partition, offset: tags[0]!.source.offset },
          k: Math.max(...indices) - first + 1,
          firstSampleIndex: first,
        });
        group.slots.push({ job: jobIndex, first });
      }
    });

    for (const [key, group] of groups) {
      const made = synthesize(this.settings.model, group.sources, { temperature: group.temperature, seed: group.seed, privacyGuard: this.settings.privacyGuard });
      const variants: SyntheticVariant[][] = group.sources.map(() => []);
      for (const { sourceIndex, sampleIndex, record } of made.records) variants[sourceIndex]!.push({ sampleIndex, record });
      const framed = guardStage(this.outputFraming, variants).framed;
      group.slots.forEach(({ job }, slot) => {
        const kept = new Map(variants[slot]!.map((variant) => [variant.sampleIndex, variant.record]));
        const payloads = new Map(framed[slot]!.map((variant) => [variant.sampleIndex, variant.payload]));
        const className = group.sources[slot]!.className;
        jobs[job]!.tags.forEach((tag, t) => {
          if (seedTemperatureKey(tag) !== key) return;
          const record = kept.get(tag.sampleIndex);
          const payload = payloads.get(tag.sampleIndex);
          results[job]![t] =
            record !== undefined && payload !== undefined
              ? { ok: true, record, payload }
              : { ok: false, reason: `the model makes no sample ${tag.sampleIndex} of its source record (class ${className}) now: ${dropReason(record)}` };
        });
      });
    }
    return results;
  }
}

function seedTemperatureKey(tag: SyntheticTag): string {
  return `${tag.seed}/${tag.temperature}`;
}

function groupTags(tags: readonly SyntheticTag[]): Map<string, SyntheticTag[]> {
  const grouped = new Map<string, SyntheticTag[]>();
  for (const tag of tags) {
    const key = seedTemperatureKey(tag);
    grouped.set(key, [...(grouped.get(key) ?? []), tag]);
  }
  return grouped;
}

function dropReason(record: RecordValue | undefined): string {
  return record === undefined
    ? "the model's privacy guard or schema check drops it (different guard settings, or a different source record?)"
    : 'the output schema refuses it';
}

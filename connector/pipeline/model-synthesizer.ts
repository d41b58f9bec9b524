/**
 * The trained model as the core's `Synthesizer`: `model/synthesize.ts` does the work (posterior
 * sample → codec decode → schema check → privacy guard on the re-encoded decode), so `run`, `replay`
 * and `regenerate` make a variant through one definition and a provenance tag reproduces it.
 */
import type { PrivacyGuardConfig } from '../../config/sections/model.js';
import type { AvroRecord } from '../../model/features/avro-types.js';
import { synthesize, type SynthesisResult as ModelSynthesisResult } from '../../model/synthesize.js';
import { loadTrainedModel, type TrainedModel } from '../../model/trained-model.js';
import type { SynthesisOptions, SynthesisRequest, SynthesisResult, Synthesizer, SyntheticVariant } from './synthesizer.js';

export class ModelSynthesizer implements Synthesizer {
  constructor(
    readonly model: TrainedModel,
    private readonly privacyGuard: PrivacyGuardConfig,
  ) {}

  /** Loads and verifies the model directory (see model/trained-model.ts). */
  static async load(directory: string, privacyGuard: PrivacyGuardConfig): Promise<ModelSynthesizer> {
    return new ModelSynthesizer(await loadTrainedModel(directory), privacyGuard);
  }

  get modelId(): string {
    return this.model.id;
  }

  get classes(): readonly string[] {
    return this.model.classNames;
  }

  synthesize(requests: readonly SynthesisRequest[], options: SynthesisOptions): SynthesisResult {
    const result = this.run(requests, options);
    const variants: SyntheticVariant[][] = requests.map(() => []);
    for (const { sourceIndex, sampleIndex, record } of result.records) variants[sourceIndex]!.push({ sampleIndex, record });
    const { exactCopies, nearSource, nearClassRow, invalid, invalidBySource } = result.counts;
    const invalidByClass: Record<string, number> = {};
    requests.forEach((request, index) => (invalidByClass[request.label] = (invalidByClass[request.label] ?? 0) + invalidBySource[index]!));
    return { variants, dropped: { exactCopies, nearSource, nearClassRow, invalid }, invalidByClass };
  }

  private run(requests: readonly SynthesisRequest[], options: SynthesisOptions): ModelSynthesisResult {
    const sources = requests.map((request) => ({
      record: request.record as AvroRecord,
      className: request.label,
      key: request.key,
      k: request.k,
    }));
    return synthesize(this.model, sources, { temperature: options.temperature, seed: options.seed, privacyGuard: this.privacyGuard });
  }

  dispose(): void {
    this.model.dispose();
  }
}

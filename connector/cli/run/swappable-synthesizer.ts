/**
 * The worker's model as the core sees it: a `Synthesizer` that delegates to the model in use and can
 * take a newer one. A new model is only offered while batches run; the worker puts it in place between
 * two batches (`swapIfOffered`), so every record of a batch is made by one model and its provenance names
 * that model (the core reads `modelId` when it tags the batch).
 */
import type { SynthesisOptions, SynthesisRequest, SynthesisResult, Synthesizer } from '../../pipeline/synthesizer.js';

/** A synthesizer holding resources (tensors) that must be freed once it is no longer used. */
export interface DisposableSynthesizer extends Synthesizer {
  dispose(): void;
}

export interface ModelSwap {
  readonly from: string;
  readonly to: string;
}

export class SwappableSynthesizer<Model extends DisposableSynthesizer> implements Synthesizer {
  private offered: Model | undefined;

  constructor(private active: Model) {}

  /** The model in use now. */
  get current(): Model {
    return this.active;
  }

  get modelId(): string {
    return this.active.modelId;
  }

  get classes(): readonly string[] {
    return this.active.classes;
  }

  synthesize(requests: readonly SynthesisRequest[], options: SynthesisOptions): SynthesisResult | Promise<SynthesisResult> {
    return this.active.synthesize(requests, options);
  }

  /** Queues `next` for the next swap; a model offered earlier and not yet swapped in is dropped. */
  offer(next: Model): void {
    this.offered?.dispose();
    this.offered = next;
  }

  /** Call between batches: puts an offered model in place and frees the one it replaces. */
  swapIfOffered(): ModelSwap | undefined {
    const next = this.offered;
    if (next === undefined) return undefined;
    this.offered = undefined;
    const previous = this.active;
    this.active = next;
    previous.dispose();
    return { from: previous.modelId, to: next.modelId };
  }

  dispose(): void {
    this.offered?.dispose();
    this.offered = undefined;
    this.active.dispose();
  }
}

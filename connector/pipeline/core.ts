/**
 * The pipeline core, shared by `run` (topic → topic) and `replay` (topic or file → topic or file):
 * a batch of source messages in, the messages to write and the batch's accounting out. It knows no
 * Kafka and no files; sources and sinks are adapters, the model is a `Synthesizer`.
 *
 *   decode (unframe, decode, label) → plan (balance, rate cap `thin`) → sample (one model call)
 *   → guard (privacy in the model, output schema here) → tag (provenance) → emit (fixed order)
 *
 * Synthetic records the guards drop are handed back to the balance controller (`recordShortfall`), so
 * its counts hold what was really emitted and later records make up the deficit.
 */
import type { LabelConfig } from '../../config/sections/label.js';
import type { Framing } from '../avro/framing.js';
import type { PayloadDecoder } from '../avro/payload-decoder.js';
import { emptyTally, type BatchAccounting, type ClassTally } from './accounting.js';
import type { BalanceController, RecordPlan } from './balance.js';
import type { DeadLetterCode } from './dead-letter.js';
import { decodeStage, type DecodedEntry } from './decode-stage.js';
import { emitStage } from './emit-stage.js';
import { guardStage, type GuardOutcome } from './guard-stage.js';
import { labelReader, type LabelReader } from './label.js';
import { balanceRecordOf, planStage } from './plan-stage.js';
import type { Clock, TokenBucket } from './rate-limit.js';
import { sampleStage, type SampleOutcome } from './sample-stage.js';
import type { InputMessage, OutputMessage } from './source-sink.js';
import type { Synthesizer } from './synthesizer.js';

export interface SamplingSettings {
  /** The run's seed: keys the sampling noise and the rounding draws. */
  readonly seed: number;
  /** Latent noise scale (> 0). */
  readonly temperature: number;
}

export interface PipelineCoreOptions {
  /** Input framing and reader schema. */
  readonly decoder: PayloadDecoder;
  /** How output records are framed; its schema is the one synthetic records are checked against. */
  readonly outputFraming: Framing;
  readonly label: LabelConfig;
  /** Must own (`assign`) every partition a batch brings. */
  readonly balance: BalanceController;
  readonly synthesizer: Synthesizer;
  readonly sampling: SamplingSettings;
  /** Pass every labelled original through to the output (a balanced copy of the stream). */
  readonly includeOriginals: boolean;
  /**
   * Originals keep the bytes they came in, not framed again: only where that gives the same record
   * (`originalsPassUnchanged`).
   * @default false
   */
  readonly originalsAsRead?: boolean;
  /** Rate cap with policy `thin`: k is lowered to the tokens available. Absent: no thinning. */
  readonly thinning?: TokenBucket;
  /** Times the model call. @default performance.now */
  readonly clock?: Clock;
  /** Shown every batch once decoded and labelled (the worker's drift monitor samples from it). */
  readonly onDecoded?: (entries: readonly DecodedEntry[]) => void;
}

export interface BatchResult {
  /** In the order to write them (see emit-stage.ts). */
  readonly outputs: OutputMessage[];
  readonly accounting: BatchAccounting;
}

export class PipelineCore {
  private readonly readLabel: LabelReader;
  private readonly clock: Clock;

  constructor(private readonly options: PipelineCoreOptions) {
    this.readLabel = labelReader(options.label, options.synthesizer.classes);
    this.clock = options.clock ?? { now: () => performance.now() };
  }

  get modelId(): string {
    return this.options.synthesizer.modelId;
  }

  async processBatch(messages: readonly InputMessage[]): Promise<BatchResult> {
    const { balance, synthesizer, sampling, outputFraming } = this.options;
    const entries = await decodeStage(messages, this.options.decoder, this.readLabel);
    this.options.onDecoded?.(entries);
    const plans = planStage(balance, entries, this.options.thinning);
    const sampled = await sampleStage(synthesizer, entries, plans, sampling, this.clock);
    const guarded = guardStage(outputFraming, sampled.variants);
    entries.forEach((entry, index) => {
      const shortfall = (plans[index]?.k ?? 0) - guarded.framed[index]!.length;
      if (entry.kind === 'record' && shortfall > 0) balance.recordShortfall(balanceRecordOf(entry), shortfall);
    });
    const outputs = emitStage(entries, guarded.framed, {
      framing: outputFraming,
      includeOriginals: this.options.includeOriginals,
      originalsAsRead: this.options.originalsAsRead === true,
      modelId: synthesizer.modelId,
      seed: BigInt(sampling.seed),
      temperature: sampling.temperature,
    });
    return { outputs, accounting: this.account(entries, plans, sampled, guarded) };
  }

  private account(entries: readonly DecodedEntry[], plans: readonly (RecordPlan | undefined)[], sampled: SampleOutcome, guarded: GuardOutcome): BatchAccounting {
    const byClass: Record<string, ClassTally> = {};
    const deadLetters: Partial<Record<DeadLetterCode, number>> = {};
    entries.forEach((entry, index) => {
      if (entry.kind === 'rejected') {
        deadLetters[entry.problem.code] = (deadLetters[entry.problem.code] ?? 0) + 1;
        return;
      }
      const tally = (byClass[entry.label] ??= emptyTally());
      const plan = plans[index]!;
      const emitted = guarded.framed[index]!.length;
      tally.consumed += 1;
      tally.planned += plan.k;
      tally.thinned += plan.thinned;
      tally.synthetic += emitted;
      tally.guardDropped += plan.k - emitted;
      // The output schema check drops only what it refuses: the rest of the model's variants were framed.
      tally.invalid += sampled.variants[index]!.length - emitted;
      if (this.options.includeOriginals) tally.originalsEmitted += 1;
    });
    for (const [label, invalid] of Object.entries(sampled.invalidByClass ?? {})) {
      if (invalid > 0) (byClass[label] ??= emptyTally()).invalid += invalid;
    }
    return {
      records: entries.length,
      byClass,
      deadLetters,
      guardDrops: { ...sampled.dropped, invalid: sampled.dropped.invalid + guarded.invalid },
      modelRows: sampled.rows,
      modelMs: sampled.elapsedMs,
    };
  }
}

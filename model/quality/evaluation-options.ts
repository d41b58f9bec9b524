/** Checks and defaults of `evaluateQuality`'s input and options; errors name the value and the fix. */
import { UsageError } from '../../config/errors.js';
import type { EvaluationOptions, LabelledRecord } from './quality-report.js';

export const DEFAULT_HOLDOUT_SHARE = 0.25;
export const DEFAULT_BOOTSTRAP_RESAMPLES = 200;

export interface ResolvedEvaluationOptions {
  readonly seed: number;
  readonly holdoutShare: number;
  readonly k: number;
  readonly temperature: number;
  readonly bootstrapResamples: number;
  readonly onProgress: (stage: string, done: number) => void;
  readonly now: () => number;
}

export function resolveEvaluationOptions(options: EvaluationOptions): ResolvedEvaluationOptions {
  const holdoutShare = options.holdoutShare ?? DEFAULT_HOLDOUT_SHARE;
  const bootstrapResamples = options.bootstrapResamples ?? DEFAULT_BOOTSTRAP_RESAMPLES;
  if (!Number.isSafeInteger(options.seed)) throw usage(`seed must be a whole number, got ${options.seed}: set it to an integer such as 42`);
  if (!Number.isInteger(options.k) || options.k < 1) throw usage(`k must be a whole number ≥ 1, got ${options.k}: ask for at least one synthetic record per rare record`);
  if (!Number.isFinite(options.temperature) || options.temperature < 0) {
    throw usage(`temperature must be a number ≥ 0, got ${options.temperature}: 1 samples the model as trained`);
  }
  if (!(holdoutShare > 0 && holdoutShare < 1)) throw usage(`holdoutShare must be between 0 and 1 (exclusive), got ${holdoutShare}: 0.25 holds out a quarter of each class`);
  if (!Number.isInteger(bootstrapResamples) || bootstrapResamples < 1) {
    throw usage(`bootstrapResamples must be a whole number ≥ 1, got ${bootstrapResamples}: ${DEFAULT_BOOTSTRAP_RESAMPLES} is the default`);
  }
  return {
    seed: options.seed,
    holdoutShare,
    k: options.k,
    temperature: options.temperature,
    bootstrapResamples,
    onProgress: options.onProgress ?? (() => {}),
    now: options.now ?? (() => performance.now()),
  };
}

/** Every rare class must have records on both sides: train to oversample, holdout to score. */
export function checkRareClasses(rareClasses: readonly string[], train: readonly LabelledRecord[], holdout: readonly LabelledRecord[]): void {
  if (rareClasses.length === 0) throw usage('no rare classes to evaluate: name at least one class to oversample (the balance targets of the config)');
  const duplicate = rareClasses.find((name, i) => rareClasses.indexOf(name) !== i);
  if (duplicate !== undefined) throw usage(`rare class "${duplicate}" is listed twice: list each class once`);
  for (const [side, records, fix] of [
    ['train split', train, 'give records of that class, or drop it from the rare classes'],
    ['holdout', holdout, 'give a holdout with records of that class (or more records, so the split holds one out), or drop it from the rare classes'],
  ] as const) {
    for (const className of rareClasses) {
      if (!records.some((record) => record.className === className)) throw usage(`rare class "${className}" has no record in the ${side}: ${fix}`);
    }
  }
}

function usage(message: string): UsageError {
  return new UsageError(`evaluate: ${message}`, { code: 'evaluate.options' });
}

/**
 * The drift reference: how the drift score (score.ts) is spread over records of the training
 * distribution, kept in the model directory as the fit attachment `driftReference` (so it is part of
 * the content-hashed model section and follows the model id; see vae/artifact.ts).
 *
 * Scored rows: the rows training held out for validation, not the rows the weights were fitted on —
 * those score better than new records from the same distribution would, and a reference from them
 * would make an undrifted stream look drifted. Early stopping did pick the epoch by these rows, a far
 * smaller optimism. When fewer than `MIN_HELD_OUT_ROWS` were held out (`validationFraction` near 0, or
 * a tiny data set), every fitted row is scored instead and the reference says so (`rows: 'fitted'`).
 */
import { RaretideError } from '../../config/errors.js';
import type { Attachments } from '../vae/artifact.js';
import { gatherRows, type TrainingData } from '../vae/dataset.js';
import { trainingSplit } from '../vae/train.js';
import type { VaeHyperParameters } from '../vae/hyperparameters.js';
import { negativeElboScores, type ScoringModel } from './score.js';

/** The attachment key. */
export const DRIFT_REFERENCE_ATTACHMENT = 'driftReference';
/** Fewest held-out rows a reference is built from; below, all fitted rows are scored. */
export const MIN_HELD_OUT_ROWS = 100;
/** Most rows scored for the reference (an even stride through them beyond); p99 is stable long before. */
export const MAX_REFERENCE_ROWS = 100_000;

/** Quantiles of the negative ELBO (nats) over the reference rows. */
export interface DriftReference {
  /** Which rows were scored: training's held-out validation rows, or every fitted row. */
  readonly rows: 'held-out' | 'fitted';
  /** How many. */
  readonly count: number;
  readonly p50: number;
  readonly p90: number;
  /** The exceedance threshold: about 1 % of records like the training data score above it. */
  readonly p99: number;
}

/** Scores the held-out rows of `data` (or all of them; see the file comment) with the trained model. */
export function buildDriftReference(
  model: ScoringModel & { readonly hyperParameters: VaeHyperParameters },
  data: TrainingData,
): DriftReference {
  const heldOut = heldOutRows(data, model.hyperParameters);
  const useHeldOut = heldOut.length >= MIN_HELD_OUT_ROWS;
  const candidates = useHeldOut ? heldOut : Array.from({ length: data.classes.length }, (_, row) => row);
  const rows = evenStride(candidates, MAX_REFERENCE_ROWS);
  const { features } = gatherRows(data, rows);
  const scores = negativeElboScores(model, features, rows.map((row) => data.classes[row]!));
  return referenceFromScores(scores, useHeldOut ? 'held-out' : 'fitted');
}

/**
 * The rows `trainVae` held out for validation (its own split function). A test checks that scoring
 * these rows reproduces the validation loss training recorded.
 */
export function heldOutRows(data: TrainingData, hyperParameters: Pick<VaeHyperParameters, 'seed' | 'validationFraction'>): number[] {
  return trainingSplit(data, hyperParameters).validation.flat();
}

export function referenceFromScores(scores: ArrayLike<number>, rows: DriftReference['rows']): DriftReference {
  if (scores.length === 0) throw new RaretideError('drift.no-rows', 'the drift reference needs at least one scored row');
  const sorted = Float64Array.from(scores).sort();
  return { rows, count: sorted.length, p50: quantileOfSorted(sorted, 0.5), p90: quantileOfSorted(sorted, 0.9), p99: quantileOfSorted(sorted, 0.99) };
}

/**
 * The p-quantile of ascending values by linear interpolation between order statistics, x[h] with
 * h = (n − 1)·p (Hyndman & Fan 1996, definition 7; the default of R and NumPy) [from memory].
 */
export function quantileOfSorted(sorted: ArrayLike<number>, p: number): number {
  const h = (sorted.length - 1) * p;
  const low = Math.floor(h);
  const high = Math.min(low + 1, sorted.length - 1);
  return sorted[low]! + (h - low) * (sorted[high]! - sorted[low]!);
}

/**
 * The reference stored with a model, or undefined for a model fitted before drift references
 * existed. A malformed one is refused as `model.corrupt`.
 */
export function readDriftReference(attachments: Attachments, directory: string): DriftReference | undefined {
  const stored = attachments[DRIFT_REFERENCE_ATTACHMENT];
  if (stored === undefined) return undefined;
  const reference = stored as Partial<DriftReference> | null;
  const finite = (value: unknown): value is number => typeof value === 'number' && Number.isFinite(value);
  const valid =
    reference !== null &&
    typeof reference === 'object' &&
    (reference.rows === 'held-out' || reference.rows === 'fitted') &&
    Number.isInteger(reference.count) &&
    reference.count! >= 1 &&
    finite(reference.p50) &&
    finite(reference.p90) &&
    finite(reference.p99) &&
    reference.p50 <= reference.p90 &&
    reference.p90 <= reference.p99;
  if (!valid) {
    throw new RaretideError(
      'model.corrupt',
      `model directory ${directory} is corrupt: its ${DRIFT_REFERENCE_ATTACHMENT} attachment is not {rows, count, p50 ≤ p90 ≤ p99} (got ${JSON.stringify(stored)}). Refit the model with \`raretide fit\`.`,
    );
  }
  return reference as DriftReference;
}

function evenStride(rows: readonly number[], most: number): number[] {
  if (rows.length <= most) return [...rows];
  return Array.from({ length: most }, (_, i) => rows[Math.floor((i * rows.length) / most)]!);
}

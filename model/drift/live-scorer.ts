/**
 * A loaded model as the worker's drift monitor needs it: its drift reference, and records in, drift
 * scores out (feature codec → `negativeElboScores`). A model fitted before drift references existed
 * has none, and yields no scorer.
 */
import type { AvroRecord } from '../features/avro-types.js';
import type { TrainedModel } from '../trained-model.js';
import { readDriftReference, type DriftReference } from './reference.js';
import { negativeElboScores } from './score.js';

export interface DriftScorer {
  /** The model the scores are under. */
  readonly modelId: string;
  readonly reference: DriftReference;
  /** Features per record. */
  readonly width: number;
  /** Index of a class name in the model's classes, or −1 for a class it does not know. */
  classIndex(label: string): number;
  /** Writes the record's features into row `row` of `out` (row-major, `width` per row). */
  encode(record: AvroRecord, out: Float32Array, row: number): void;
  /** Negative ELBO (nats) of each row; see score.ts. */
  score(features: Float32Array, classIndices: Int32Array): Float64Array;
}

/** The scorer for `model`, or undefined when the model carries no drift reference. */
export function driftScorerFor(model: TrainedModel): DriftScorer | undefined {
  const reference = readDriftReference(model.vae.attachments, model.directory);
  if (reference === undefined) return undefined;
  const classes = new Map(model.classNames.map((name, index) => [name, index]));
  return {
    modelId: model.id,
    reference,
    width: model.codec.width,
    classIndex: (label) => classes.get(label) ?? -1,
    encode: (record, out, row) => {
      model.codec.encode(record, out, row);
    },
    score: (features, classIndices) => negativeElboScores(model.vae, features, classIndices),
  };
}

/**
 * The drift score of a record: its negative ELBO under the model, in nats,
 *   −ELBO(x, y) = −log p(x | z = mu, y) + KL(q(z | x, y) ‖ N(0, I)),
 * the two terms training minimises (model/vae/likelihood.ts) with β = 1 — the ELBO proper, whatever β
 * the model was trained with — evaluated at the posterior mean, so the same record always scores the
 * same. Higher means less like the data the model was fitted on. The fit-time reference
 * (reference.ts) and the worker's live scores both come from here, so they stay comparable.
 */
import { UsageError } from '../../config/errors.js';
import type { FeatureLayout } from '../features/layout.js';
import { negativeElboRows } from '../vae/inference.js';
import { headIndexFor } from '../vae/likelihood.js';
import type { ConditionalVae } from '../vae/network.js';

/** The KL weight of the drift score: 1, the ELBO itself. */
export const DRIFT_SCORE_BETA = 1;

/** What scoring needs of a model. */
export interface ScoringModel {
  readonly network: ConditionalVae;
  readonly layout: FeatureLayout;
}

/**
 * Negative ELBO of each row of `features` (row-major, `layout.width` per row) with class
 * `classIndices[row]`; batched in the backend's inference chunks (vae/inference.ts).
 */
export function negativeElboScores(model: ScoringModel, features: Float32Array, classIndices: ArrayLike<number>): Float64Array {
  const { network, layout } = model;
  const rows = classIndices.length;
  const classCount = network.topology.classCount;
  if (features.length !== rows * layout.width) {
    throw new UsageError(`drift scoring got ${features.length} features for ${rows} rows of width ${layout.width}; expected ${rows * layout.width}`);
  }
  if (rows === 0) return new Float64Array(0);
  const classOneHot = new Float32Array(rows * classCount);
  for (let row = 0; row < rows; row++) {
    const classIndex = classIndices[row]!;
    if (!(Number.isInteger(classIndex) && classIndex >= 0 && classIndex < classCount)) {
      throw new UsageError(`drift scoring: row ${row} has class index ${classIndex}; the model knows classes 0…${classCount - 1}`);
    }
    classOneHot[row * classCount + classIndex] = 1;
  }
  return Float64Array.from(negativeElboRows(network, headIndexFor(layout), { rows, features, classOneHot }, DRIFT_SCORE_BETA));
}

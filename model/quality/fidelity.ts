/**
 * How close one generator's records of one rare class are to the real records of that class in the
 * train split: per-field KS or TVD, the mean absolute difference of the continuous features'
 * correlations (in the codec's normal-score space, where the model works), detection AUC, and the
 * label fidelity measured by the caller.
 */
import type { AvroRecord } from '../features/avro-types.js';
import type { Prng } from '../random.js';
import { detectionAuc } from './detection.js';
import type { FeatureRows } from './feature-rows.js';
import { leafValues, type LeafField } from './leaf-fields.js';
import { meanAbsoluteCorrelationDifference, pearsonMatrix } from './metrics/correlation.js';
import { ksStatistic } from './metrics/ks.js';
import { totalVariationDistance } from './metrics/total-variation.js';
import type { ClassFidelity, FieldFidelity } from './quality-report.js';

export interface RealAndSynthetic {
  readonly className: string;
  readonly real: readonly AvroRecord[];
  readonly realFeatures: FeatureRows;
  readonly synthetic: readonly AvroRecord[];
  readonly syntheticFeatures: FeatureRows;
  /** Index in `real` of the record each synthetic one was made from. */
  readonly sources: ArrayLike<number>;
}

export function fieldFidelity(leaves: readonly LeafField[], real: readonly AvroRecord[], synthetic: readonly AvroRecord[]): FieldFidelity[] {
  return leaves.map((leaf) =>
    leaf.kind === 'continuous'
      ? { field: leaf.field, statistic: 'ks', value: ksStatistic(leafValues(leaf, real), leafValues(leaf, synthetic)) }
      : { field: leaf.field, statistic: 'tvd', value: totalVariationDistance(leafValues(leaf, real), leafValues(leaf, synthetic)) },
  );
}

/** Feature offsets of the continuous leaves, the rows and columns of the correlation matrices. */
export function continuousColumns(leaves: readonly LeafField[]): number[] {
  return leaves.flatMap((leaf) => (leaf.kind === 'continuous' ? [leaf.featureOffset] : []));
}

export function classFidelity(
  group: RealAndSynthetic,
  leaves: readonly LeafField[],
  labelFidelity: number,
  detectionStreams: (purpose: string, index?: number) => Prng,
): ClassFidelity {
  const columns = continuousColumns(leaves);
  const { realFeatures, syntheticFeatures } = group;
  return {
    className: group.className,
    fields: fieldFidelity(leaves, group.real, group.synthetic),
    correlationDifference: meanAbsoluteCorrelationDifference(
      pearsonMatrix(realFeatures.values, realFeatures.width, columns),
      pearsonMatrix(syntheticFeatures.values, syntheticFeatures.width, columns),
    ),
    detectionAuc: detectionAuc(realFeatures, syntheticFeatures, group.sources, detectionStreams),
    labelFidelity,
  };
}

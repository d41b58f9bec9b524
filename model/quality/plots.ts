/** The plot data of a report (see QualityPlots in quality-report.ts). */
import type { AvroRecord } from '../features/avro-types.js';
import type { Prng } from '../random.js';
import type { FeatureRows } from './feature-rows.js';
import { continuousColumns } from './fidelity.js';
import type { GeneratedRecords, RareClassTrain } from './generators/generate.js';
import type { LeafField } from './leaf-fields.js';
import { pearsonMatrix } from './metrics/correlation.js';
import { fieldDistributions } from './plot-distributions.js';
import { projectRareRecords, type ProjectionGroup } from './plot-projection.js';
import type { CorrelationMatrix, GeneratorName, QualityPlots } from './quality-report.js';

export interface PlotInput {
  readonly leaves: readonly LeafField[];
  readonly rare: readonly RareClassTrain[];
  readonly synthetic: ReadonlyMap<GeneratorName, GeneratedRecords>;
  readonly syntheticRows: ReadonlyMap<GeneratorName, ReadonlyMap<string, FeatureRows>>;
  readonly projectionStream: Prng;
}

export function buildPlots({ leaves, rare, synthetic, syntheticRows, projectionStream }: PlotInput): QualityPlots {
  const continuous = leaves.filter((leaf) => leaf.kind === 'continuous');
  const columns = continuousColumns(leaves);
  const correlation = (rows: FeatureRows): CorrelationMatrix => ({
    fields: continuous.map((leaf) => leaf.field),
    values: pearsonMatrix(rows.values, rows.width, columns),
  });
  const emptyRows = (width: number): FeatureRows => ({ values: new Float32Array(0), width, count: 0 });

  const distributions = Object.fromEntries(
    rare.map(({ className, records }) => {
      // Only generators that made records of the class get bars.
      const made = new Map<GeneratorName, readonly AvroRecord[]>();
      for (const [generator, byClass] of synthetic) {
        const list = byClass.get(className)?.records ?? [];
        if (list.length > 0) made.set(generator, list);
      }
      return [className, fieldDistributions(leaves, records, made)];
    }),
  );
  const correlations = Object.fromEntries(
    rare.map(({ className, features }) => [
      className,
      { real: correlation(features), vae: correlation(syntheticRows.get('vae')?.get(className) ?? emptyRows(features.width)) },
    ]),
  );
  const groups: ProjectionGroup[] = [
    ...rare.map(({ className, features }) => ({ origin: 'real' as const, className, rows: features })),
    ...[...syntheticRows].flatMap(([origin, byClass]) =>
      [...byClass].filter(([, rows]) => rows.count > 0).map(([className, rows]) => ({ origin, className, rows })),
    ),
  ];
  return { distributions, correlations, projection: projectRareRecords(groups, projectionStream) };
}

/**
 * Fidelity side by side, for each generator that made records: how far its synthetic records of each
 * rare class are from the real train records, overall and field by field.
 */
import type { ClassFidelity, GeneratorResult, QualityReport } from '../quality-report.js';
import { formatInterval, formatScore } from './number-format.js';
import { seriesLabel } from './series-style.js';
import { markBest, type Table, type TableRow } from './table-html.js';

interface Measure {
  readonly label: string;
  readonly value: (fidelity: ClassFidelity) => number;
  readonly text: (fidelity: ClassFidelity) => string;
  /** Maps a value to "higher is better". */
  readonly score: (value: number) => number;
}

const MEASURES: readonly Measure[] = [
  {
    label: 'detection AUC (best 0.5)',
    value: (fidelity) => fidelity.detectionAuc.estimate,
    text: (fidelity) => formatInterval(fidelity.detectionAuc),
    score: (value) => -Math.abs(value - 0.5),
  },
  { label: 'label fidelity (higher better)', value: (fidelity) => fidelity.labelFidelity, text: (fidelity) => formatScore(fidelity.labelFidelity), score: (value) => value },
  {
    label: 'correlation difference (lower better)',
    value: (fidelity) => fidelity.correlationDifference,
    text: (fidelity) => formatScore(fidelity.correlationDifference, 3),
    score: (value) => -value,
  },
];

function withFidelity(report: QualityReport): GeneratorResult[] {
  return report.generators.filter((generator) => generator.fidelity !== undefined && generator.fidelity.length > 0);
}

function fidelityOf(generator: GeneratorResult, className: string): ClassFidelity | undefined {
  return generator.fidelity?.find((entry) => entry.className === className);
}

/** Returns no table when no generator made records. */
export function fidelityTables(report: QualityReport): Table[] {
  const generators = withFidelity(report);
  if (generators.length === 0) return [];
  const columnHeads = ['class', 'measure', ...generators.map((generator) => seriesLabel(generator.generator))];
  const overall: TableRow[] = report.input.rareClasses.flatMap((className) =>
    MEASURES.map((measure) => {
      const fidelities = generators.map((generator) => fidelityOf(generator, className));
      return {
        heads: [className, measure.label],
        cells: markBest(
          fidelities.map((fidelity) => (fidelity === undefined ? Number.NaN : measure.value(fidelity))),
          fidelities.map((fidelity) => (fidelity === undefined ? '—' : measure.text(fidelity))),
          measure.score,
        ),
      };
    }),
  );
  const perField: TableRow[] = report.input.rareClasses.flatMap((className) => {
    const fidelities = generators.map((generator) => fidelityOf(generator, className));
    const fields = fidelities.find((fidelity) => fidelity !== undefined)?.fields ?? [];
    return fields.map(({ field, statistic }) => {
      const values = fidelities.map((fidelity) => fidelity?.fields.find((entry) => entry.field === field)?.value ?? Number.NaN);
      return {
        heads: [className, `${field} (${statistic === 'ks' ? 'KS D' : 'TVD'})`],
        cells: markBest(values, values.map((value) => (Number.isFinite(value) ? formatScore(value, 3) : '—')), (value) => -value),
      };
    });
  });
  return [
    { id: 'fidelity', caption: 'Synthetic vs real train records of each rare class (bold: best of the row)', columnHeads, rows: overall },
    {
      id: 'fidelity-fields',
      caption: 'Per field: Kolmogorov–Smirnov D (continuous) or total variation distance (categorical); 0 = same distribution',
      columnHeads: ['class', 'field', ...columnHeads.slice(2)],
      rows: perField,
    },
  ];
}

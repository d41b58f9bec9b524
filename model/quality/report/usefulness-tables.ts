/**
 * Usefulness side by side: one-vs-rest scores of each rare class on the real holdout, for a classifier
 * trained on the real train split alone (`no augmentation`) and on it plus each generator's records.
 */
import type { ClassScores, ClassifierName, GeneratorResult, Interval, QualityReport } from '../quality-report.js';
import { formatInterval } from './number-format.js';
import { seriesLabel } from './series-style.js';
import { markBest, type Table, type TableCell } from './table-html.js';

const METRICS: readonly { readonly key: keyof Omit<ClassScores, 'className'>; readonly label: string }[] = [
  { key: 'prAuc', label: 'PR-AUC' },
  { key: 'f1', label: 'F1' },
  { key: 'precision', label: 'precision' },
  { key: 'recall', label: 'recall' },
  { key: 'rocAuc', label: 'ROC-AUC' },
];

const CLASSIFIER_LABELS: Readonly<Record<ClassifierName, string>> = {
  'logistic-regression': 'logistic regression',
  'random-forest': 'random forest',
};

export function usefulnessTables(report: QualityReport): Table[] {
  const classifiers = [...new Set(report.generators.flatMap((generator) => generator.usefulness.map((entry) => entry.classifier)))];
  return classifiers.map((classifier) => ({
    id: `usefulness-${classifier}`,
    caption: `Scores on the real holdout, ${CLASSIFIER_LABELS[classifier]} (estimate [95 % bootstrap interval]; bold: best of the row)`,
    columnHeads: ['class', 'metric', ...report.generators.map((generator) => seriesLabel(generator.generator))],
    rows: report.input.rareClasses.flatMap((className) =>
      METRICS.map(({ key, label }) => {
        const intervals = report.generators.map((generator) => scoresOf(generator, classifier, className)?.[key]);
        return { heads: [className, label], cells: intervalCells(intervals) };
      }),
    ),
  }));
}

function scoresOf(generator: GeneratorResult, classifier: ClassifierName, className: string): ClassScores | undefined {
  return generator.usefulness.find((entry) => entry.classifier === classifier)?.classes.find((entry) => entry.className === className);
}

function intervalCells(intervals: readonly (Interval | undefined)[]): TableCell[] {
  return markBest(
    intervals.map((interval) => interval?.estimate ?? Number.NaN),
    intervals.map((interval) => (interval === undefined ? '—' : formatInterval(interval))),
  );
}

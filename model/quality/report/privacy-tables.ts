/**
 * Privacy side by side: exact copies of real train records, and how close synthetic records sit to
 * their closest real train record, against the yardstick of a real holdout's distances. A synthetic
 * set closer to the train records than real unseen records are is copying, not generalising.
 */
import type { ClassPrivacy, DistancePercentiles, GeneratorResult, QualityReport } from '../quality-report.js';
import { formatCount, formatScore } from './number-format.js';
import { seriesLabel } from './series-style.js';
import type { Table, TableCell, TableRow } from './table-html.js';

const PERCENTILES: readonly { readonly key: keyof DistancePercentiles; readonly label: string }[] = [
  { key: 'p5', label: 'closest-record distance, 5th percentile' },
  { key: 'p50', label: 'closest-record distance, median' },
  { key: 'p95', label: 'closest-record distance, 95th percentile' },
];

function privacyOf(generator: GeneratorResult, className: string): ClassPrivacy | undefined {
  return generator.privacy?.find((entry) => entry.className === className);
}

/** Returns no table when no generator made records. */
export function privacyTables(report: QualityReport): Table[] {
  const generators = report.generators.filter((generator) => generator.privacy !== undefined && generator.privacy.length > 0);
  if (generators.length === 0) return [];
  const rows: TableRow[] = report.input.rareClasses.flatMap((className) => {
    const privacies = generators.map((generator) => privacyOf(generator, className));
    const yardstick = privacies.find((privacy) => privacy !== undefined)?.holdoutToTrain;
    const copies: TableCell[] = privacies.map((privacy) =>
      privacy === undefined ? { text: '—' } : { text: formatCount(privacy.exactCopies), warn: privacy.exactCopies > 0 },
    );
    const distances = PERCENTILES.map(({ key, label }) => ({
      heads: [className, label],
      cells: [
        ...privacies.map((privacy): TableCell => {
          if (privacy === undefined) return { text: '—' };
          const value = privacy.syntheticToTrain[key];
          // Closer to the train records than real unseen records are: worth a look.
          return { text: formatScore(value, 3), warn: yardstick !== undefined && value < yardstick[key] };
        }),
        { text: yardstick === undefined ? '—' : formatScore(yardstick[key], 3) },
      ],
    }));
    return [{ heads: [className, 'exact copies of train records (must be 0)'], cells: [...copies, { text: '—' }] }, ...distances];
  });
  return [
    {
      id: 'privacy',
      caption: 'Distance from each record to its closest real train record, in standardised feature units (marked: copies, or closer than the real holdout is)',
      columnHeads: ['class', 'measure', ...generators.map((generator) => seriesLabel(generator.generator)), 'real holdout (yardstick)'],
      rows,
    },
  ];
}

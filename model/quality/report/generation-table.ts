/** What each generator made: records per rare class and the time it took. */
import type { QualityReport } from '../quality-report.js';
import { formatCount, formatDuration } from './number-format.js';
import { seriesLabel } from './series-style.js';
import type { Table } from './table-html.js';

/** Records each generator made per rare class, and how long it took. */
export function generationTable(report: QualityReport): Table {
  const classes = report.input.rareClasses;
  return {
    id: 'generation',
    caption: 'Synthetic records made from the train split (k per real rare record) and the time it took',
    columnHeads: ['generator', ...classes, 'time'],
    rows: report.generators.map((generator) => ({
      heads: [seriesLabel(generator.generator)],
      cells: [...classes.map((className) => ({ text: formatCount(generator.syntheticCounts[className] ?? 0) })), { text: formatDuration(generator.generationMs) }],
    })),
  };
}

/** The text parts of the report page: verdict, caution, the input described, the shared plot legend. */
import type { QualityReport } from '../quality-report.js';
import { escapeHtml } from './html-text.js';
import { formatCount, formatDuration, formatScore } from './number-format.js';
import { SERIES_ORDER, seriesColourScale, type SeriesName } from './series-style.js';
import { tableHtml } from './table-html.js';

export function verdictHtml(report: QualityReport): string {
  const details = report.verdict.details.map((detail) => `<li>${escapeHtml(detail)}</li>`).join('');
  return (
    `<section class="verdict" id="verdict"><p class="headline">${escapeHtml(report.verdict.headline)}</p>` +
    `${details === '' ? '' : `<ul>${details}</ul>`}</section>`
  );
}

export function cautionHtml(): string {
  return (
    '<aside class="caution" id="caution"><strong>Caution.</strong> Synthetic records are for training only: never measure a model on them. ' +
    'Every score here is measured on real held-out records. These numbers come from one data set and one split; ' +
    'validate synthetic records with domain experts before a model trained on them is used for decisions.</aside>'
  );
}

export function inputHtml(report: QualityReport): string {
  const { input } = report;
  const entries: [string, string][] = [
    ['records from', input.source],
    ['holdout', input.holdoutFrom],
    ['rare classes', input.rareClasses.join(', ')],
    ['class label', input.labelPath],
    ['model', input.modelId],
    ['k (synthetic per rare record)', String(input.k)],
    ['temperature', formatScore(input.temperature)],
    ['seed', String(input.seed)],
    ['created', report.createdAt],
    ['evaluation time', formatDuration(report.elapsedMs)],
  ];
  const list = entries.map(([term, value]) => `<dt>${escapeHtml(term)}</dt><dd>${escapeHtml(value)}</dd>`).join('');
  const classes = [...new Set([...Object.keys(input.train), ...Object.keys(input.holdout)])];
  const counts = tableHtml({
    id: 'class-counts',
    caption: 'Real records per class in each split',
    columnHeads: ['class', 'train', 'holdout'],
    rows: classes.map((className) => ({
      heads: [input.rareClasses.includes(className) ? `${className} (rare)` : className],
      cells: [{ text: formatCount(input.train[className] ?? 0) }, { text: formatCount(input.holdout[className] ?? 0) }],
    })),
  });
  return `<dl class="input">${list}</dl><div class="table-scroll">${counts}</div>`;
}

/** One legend for every plot: each series keeps its colour throughout the page. */
export function legendHtml(present: readonly SeriesName[]): string {
  const { domain, range } = seriesColourScale(SERIES_ORDER.filter((series) => present.includes(series)));
  const items = domain.map((label, index) => `<span><i style="background:${range[index]}"></i>${escapeHtml(label)}</span>`).join('');
  return `<div class="legend" aria-label="series colours">${items}</div>`;
}

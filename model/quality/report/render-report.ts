/**
 * The quality report as one self-contained HTML page: inline CSS, plots as inline SVG drawn in Node,
 * no scripts and no external resource (a Content-Security-Policy forbids both), so it opens offline,
 * from a mail attachment or an archived build. It renders the `QualityReport` and nothing else.
 */
import type { QualityReport } from '../quality-report.js';
import { correlationFigures } from './correlation-plots.js';
import { distributionFigures } from './distribution-plots.js';
import { fidelityTables } from './fidelity-tables.js';
import { generationTable } from './generation-table.js';
import { escapeHtml } from './html-text.js';
import { cautionHtml, inputHtml, legendHtml, verdictHtml } from './page-sections.js';
import { figureHtml, type PlotFigure } from './plot-figure.js';
import { privacyTables } from './privacy-tables.js';
import { projectionFigures } from './projection-plot.js';
import { REPORT_CSS } from './report-style.js';
import type { SeriesName } from './series-style.js';
import { tableHtml, type Table } from './table-html.js';
import { usefulnessTables } from './usefulness-tables.js';

// No scripts, no fetches: only the inline style is allowed (inline SVG needs no permission).
const CONTENT_POLICY = "default-src 'none'; style-src 'unsafe-inline'";

export async function renderReportHtml(report: QualityReport): Promise<string> {
  const distributions = await distributionFigures(report);
  const correlations = await correlationFigures(report);
  const projection = await projectionFigures(report);
  const fidelity = fidelityTables(report);
  const body = [
    `<h1>Synthetic rare-record quality report</h1>`,
    `<p class="sub">${escapeHtml(report.input.source)} · ${escapeHtml(report.createdAt)}</p>`,
    verdictHtml(report),
    cautionHtml(),
    section('input', 'Input', inputHtml(report)),
    section(
      'usefulness',
      'Usefulness: does training on the synthetic records help?',
      '<p class="note">Each classifier is trained on the real train split, alone or with one generator\'s synthetic records, and scored on the real holdout.</p>' +
        tables(usefulnessTables(report)),
    ),
    section(
      'fidelity',
      'Fidelity: do the synthetic records look like the real ones?',
      fidelity.length === 0
        ? none('No generator made records to compare.')
        : '<p class="note">Duplication repeats real records, so it matches them by construction: read its column with its privacy row.</p>' + tables(fidelity),
    ),
    section('privacy', 'Privacy: do the synthetic records copy real ones?', tables(privacyTables(report)) || none('No generator made records to compare.')),
    section('generation', 'Records made', tables([generationTable(report)])),
    section('distributions', 'Distributions of the rare records, field by field', figures(distributions, report)),
    section('correlations', 'Correlations of the continuous features', figures(correlations, report, { empty: 'Fewer than two continuous features: no correlations to show.', legend: false })),
    section('projection', 'Real and synthetic rare records, projected', figures(projection, report, { empty: 'No points to project.' })),
    `<footer>${escapeHtml(`${report.format} v${report.version} · written by raretide`)}</footer>`,
  ];
  return [
    '<!DOCTYPE html>',
    '<html lang="en">',
    '<head>',
    '<meta charset="utf-8">',
    `<meta http-equiv="Content-Security-Policy" content="${CONTENT_POLICY}">`,
    '<meta name="viewport" content="width=device-width, initial-scale=1">',
    `<title>${escapeHtml(`raretide quality report — ${report.input.source}`)}</title>`,
    `<style>${REPORT_CSS}</style>`,
    '</head>',
    '<body><main>',
    ...body,
    '</main></body>',
    '</html>',
    '',
  ].join('\n');
}

function section(id: string, title: string, content: string): string {
  return `<section id="${id}"><h2>${escapeHtml(title)}</h2>\n${content}\n</section>`;
}

function tables(list: readonly Table[]): string {
  return list.map((table) => `<div class="table-scroll">${tableHtml(table)}</div>`).join('\n');
}

function none(message: string): string {
  return `<p class="note">${escapeHtml(message)}</p>`;
}

/** Plots under the shared legend (when their colours are the series'), grouped by rare class where they belong to one. */
function figures(list: readonly PlotFigure[], report: QualityReport, options: { empty?: string; legend?: boolean } = {}): string {
  if (list.length === 0) return none(options.empty ?? 'Nothing to plot.');
  const groups = new Map<string | undefined, PlotFigure[]>();
  for (const figure of list) groups.set(figure.data.class, [...(groups.get(figure.data.class) ?? []), figure]);
  const html = [...groups].map(([className, members]) => {
    const heading = className === undefined ? '' : `<h3>${escapeHtml(className)}</h3>`;
    return `${heading}<div class="plots">\n${members.map(figureHtml).join('\n')}\n</div>`;
  });
  return `${options.legend === false ? '' : legendHtml(seriesShown(report))}${html.join('\n')}`;
}

/** Real, and every generator that made records. */
function seriesShown(report: QualityReport): SeriesName[] {
  const made = report.generators.filter((generator) => Object.values(generator.syntheticCounts).some((count) => count > 0));
  return ['real', ...made.map((generator) => generator.generator)];
}

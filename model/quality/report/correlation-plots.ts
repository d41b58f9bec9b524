/**
 * Heat maps of the pairwise Pearson correlations of the continuous features of a rare class: the real
 * records beside the VAE's synthetic ones, on one diverging colour scale from −1 to 1.
 */
import type { TopLevelSpec } from 'vega-lite';
import type { CorrelationMatrix, QualityReport } from '../quality-report.js';
import { plotId, type PlotFigure } from './plot-figure.js';
import { seriesLabel } from './series-style.js';
import { vegaLiteSvg } from './vega-svg.js';

/** Above this many fields the cells are too small to print their values in. */
const MOST_LABELLED_FIELDS = 8;

/** One figure per rare class with at least two continuous features (fewer have no pairs). */
export async function correlationFigures(report: QualityReport): Promise<PlotFigure[]> {
  const figures: PlotFigure[] = [];
  for (const className of report.input.rareClasses) {
    const matrices = report.plots.correlations[className];
    if (matrices === undefined || matrices.real.fields.length < 2) continue;
    const id = plotId('correlation', figures.length + 1);
    figures.push({
      id,
      kind: 'correlation',
      data: { class: className },
      caption: `${className}: correlations of the continuous features, real records and the VAE's synthetic ones`,
      svg: await vegaLiteSvg(correlationSpec(matrices.real, matrices.vae), id),
    });
  }
  return figures;
}

function cells(panel: string, matrix: CorrelationMatrix): { panel: string; row: string; column: string; value: number | null }[] {
  return matrix.fields.flatMap((row, i) =>
    matrix.fields.map((column, j) => {
      // A constant feature has no correlation; the JSON report holds it as null.
      const value = matrix.values[i]?.[j];
      return { panel, row, column, value: typeof value === 'number' && Number.isFinite(value) ? value : null };
    }),
  );
}

function correlationSpec(real: CorrelationMatrix, vae: CorrelationMatrix): TopLevelSpec {
  const panels = ['real', seriesLabel('vae')];
  const fields = [...real.fields, ...vae.fields.filter((field) => !real.fields.includes(field))];
  const side = Math.min(320, Math.max(120, fields.length * 28));
  const rect = {
    mark: { type: 'rect' as const },
    encoding: {
      color: {
        field: 'value',
        type: 'quantitative' as const,
        title: 'Pearson r',
        scale: { domain: [-1, 1], scheme: 'blueorange', reverse: true },
      },
    },
  };
  const text = {
    mark: { type: 'text' as const, fontSize: 9 },
    encoding: {
      text: { field: 'value', type: 'quantitative' as const, format: '.2f' },
      color: { condition: { test: 'abs(datum.value) > 0.6', value: 'white' }, value: 'black' },
    },
  };
  return {
    data: { values: [...cells(panels[0]!, real), ...cells(panels[1]!, vae)] },
    facet: { column: { field: 'panel', type: 'nominal', title: null, sort: panels } },
    spec: {
      width: side,
      height: side,
      encoding: {
        x: { field: 'column', type: 'nominal', title: null, sort: fields, axis: { labelAngle: -40 } },
        y: { field: 'row', type: 'nominal', title: null, sort: fields },
      },
      layer: fields.length <= MOST_LABELLED_FIELDS ? [rect, text] : [rect],
    },
  };
}

/**
 * Per-field plots of the rare records: the real train records of a class against each generator's
 * synthetic ones, as shares so sets of different sizes compare. Continuous fields are step lines over
 * the shared bins; categorical ones are grouped bars.
 */
import type { TopLevelSpec } from 'vega-lite';
import { GENERATOR_NAMES, type FieldDistribution, type QualityReport } from '../quality-report.js';
import { plotId, type PlotFigure } from './plot-figure.js';
import { seriesColourScale, seriesLabel, type SeriesName } from './series-style.js';
import { vegaLiteSvg } from './vega-svg.js';

interface Series {
  readonly name: SeriesName;
  readonly counts: readonly number[];
}

/** One figure per rare class and field, in class order then field order. */
export async function distributionFigures(report: QualityReport): Promise<PlotFigure[]> {
  const figures: PlotFigure[] = [];
  for (const className of report.input.rareClasses) {
    for (const distribution of report.plots.distributions[className] ?? []) {
      const id = plotId('distribution', figures.length + 1);
      figures.push({
        id,
        kind: 'distribution',
        data: { class: className, field: distribution.field },
        caption: `${className}: ${distribution.field} (${distribution.kind})`,
        svg: await vegaLiteSvg(distributionSpec(distribution), id),
      });
    }
  }
  return figures;
}

function seriesOf(distribution: FieldDistribution): Series[] {
  const synthetic = GENERATOR_NAMES.flatMap((generator): Series[] => {
    const counts = distribution.synthetic[generator];
    return counts === undefined ? [] : [{ name: generator, counts }];
  });
  return [{ name: 'real' as const, counts: distribution.real }, ...synthetic].filter((series) => sum(series.counts) > 0);
}

function distributionSpec(distribution: FieldDistribution): TopLevelSpec {
  const series = seriesOf(distribution);
  const colour = {
    field: 'series',
    type: 'nominal' as const,
    scale: seriesColourScale(series.map((entry) => entry.name)),
    legend: null,
  };
  const shareAxis = { field: 'share', type: 'quantitative' as const, title: 'share of records', axis: { format: '.0%' } };
  if (distribution.kind === 'continuous') {
    const { edges } = distribution;
    // A step line needs the last bin's right edge as a final point to draw that bin.
    const values = series.flatMap(({ name, counts }) => {
      const total = sum(counts);
      const steps = counts.map((count, bin) => ({ series: seriesLabel(name), start: edges[bin]!, share: count / total }));
      return [...steps, { series: seriesLabel(name), start: edges[counts.length]!, share: counts[counts.length - 1]! / total }];
    });
    const real = seriesLabel('real');
    const x = { field: 'start', type: 'quantitative' as const, title: null, scale: { zero: false, nice: false } };
    // Real as a shaded area underneath, each generator as a line over it: a generator that matches the
    // real records exactly (duplication) still shows, tracing the area's outline.
    return {
      width: 260,
      height: 130,
      title: distribution.field,
      data: { values },
      encoding: { x, y: shareAxis, color: colour },
      layer: [
        { transform: [{ filter: { field: 'series', equal: real } }], mark: { type: 'area', interpolate: 'step-after', opacity: 0.18, line: { strokeWidth: 1 } } },
        { transform: [{ filter: { not: { field: 'series', equal: real } } }], mark: { type: 'line', interpolate: 'step-after', strokeWidth: 1.6 } },
      ],
    };
  }
  const values = series.flatMap(({ name, counts }) => {
    const total = sum(counts);
    return counts.map((count, index) => ({ series: seriesLabel(name), category: distribution.categories[index]!, share: count / total }));
  });
  return {
    height: 130,
    title: distribution.field,
    data: { values },
    mark: { type: 'bar' },
    encoding: {
      x: { field: 'category', type: 'nominal', title: null, sort: [...distribution.categories], axis: { labelAngle: -30 } },
      xOffset: { field: 'series', type: 'nominal', sort: colour.scale.domain },
      y: shareAxis,
      color: colour,
    },
  };
}

function sum(values: readonly number[]): number {
  return values.reduce((total, value) => total + value, 0);
}

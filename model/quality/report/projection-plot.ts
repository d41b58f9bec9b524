/**
 * The rare records on the first two principal components of the real ones: real points with every
 * generator's points over them, one panel per rare class. Synthetic records that fill the real cloud
 * look right; ones that sit off it, or only on top of real points, do not.
 */
import type { TopLevelSpec } from 'vega-lite';
import type { ProjectedPoint, QualityReport } from '../quality-report.js';
import { formatCount } from './number-format.js';
import { plotId, type PlotFigure } from './plot-figure.js';
import { SERIES_ORDER, seriesColourScale, seriesLabel } from './series-style.js';
import { vegaLiteSvg } from './vega-svg.js';

/** Most points drawn per class and series; more are evenly thinned (the SVG grows with every point). */
export const MOST_POINTS_PER_SERIES = 1500;

export async function projectionFigures(report: QualityReport): Promise<PlotFigure[]> {
  const { points, thinned } = thin(report.plots.projection);
  if (points.length === 0) return [];
  const note = thinned ? `; at most ${formatCount(MOST_POINTS_PER_SERIES)} points per class and series are drawn, evenly thinned` : '';
  const id = plotId('projection', 1);
  return [
    {
      id,
      kind: 'projection',
      data: { points: String(points.length) },
      caption: `Real and synthetic rare records on the first two principal components of the real ones${note}`,
      svg: await vegaLiteSvg(projectionSpec(points, report.input.rareClasses), id),
    },
  ];
}

function thin(points: readonly ProjectedPoint[]): { points: ProjectedPoint[]; thinned: boolean } {
  const groups = new Map<string, ProjectedPoint[]>();
  for (const point of points) {
    const key = `${point.className}\u0000${point.origin}`;
    const group = groups.get(key);
    if (group === undefined) groups.set(key, [point]);
    else group.push(point);
  }
  let thinned = false;
  const kept = [...groups.values()].flatMap((group) => {
    if (group.length <= MOST_POINTS_PER_SERIES) return group;
    thinned = true;
    const step = group.length / MOST_POINTS_PER_SERIES;
    return Array.from({ length: MOST_POINTS_PER_SERIES }, (_, index) => group[Math.floor(index * step)]!);
  });
  return { points: kept, thinned };
}

function projectionSpec(points: readonly ProjectedPoint[], rareClasses: readonly string[]): TopLevelSpec {
  const present = SERIES_ORDER.filter((series) => points.some((point) => point.origin === series));
  const values = points.map((point) => ({
    x: point.x,
    y: point.y,
    series: seriesLabel(point.origin),
    // Real points are drawn last, on top, so a generator's cloud cannot hide them.
    layer: point.origin === 'real' ? present.length : present.indexOf(point.origin),
    className: point.className,
  }));
  const classes = rareClasses.filter((className) => points.some((point) => point.className === className));
  return {
    data: { values },
    facet: { field: 'className', type: 'nominal', title: null, sort: classes },
    columns: 2,
    resolve: { scale: { x: 'independent', y: 'independent' } },
    spec: {
      width: 300,
      height: 240,
      mark: { type: 'circle', size: 14, opacity: 0.55 },
      encoding: {
        x: { field: 'x', type: 'quantitative', title: 'component 1', scale: { zero: false } },
        y: { field: 'y', type: 'quantitative', title: 'component 2', scale: { zero: false } },
        color: { field: 'series', type: 'nominal', scale: seriesColourScale(present), legend: null },
        order: { field: 'layer', type: 'quantitative' },
      },
    },
  };
}

/**
 * One plot in the page: its SVG inside a `<figure>` that names the plot kind and what it shows in data
 * attributes, so readers (and tests) can find every plot without parsing the SVG.
 */
import { escapeHtml } from './html-text.js';

export type PlotKind = 'distribution' | 'correlation' | 'projection';

export interface PlotFigure {
  readonly kind: PlotKind;
  /** Element id, from `plotId`. */
  readonly id: string;
  /** Extra `data-…` attributes, e.g. `{class: 'snow', field: 'wind'}`; values are escaped here. */
  readonly data: Readonly<Record<string, string>>;
  readonly caption: string;
  readonly svg: string;
}

/** Stable element id of the n-th plot (from 1) of a kind: `plot-distribution-3`. */
export function plotId(kind: PlotKind, index: number): string {
  return `plot-${kind}-${index}`;
}

export function figureHtml(figure: PlotFigure): string {
  const attributes = Object.entries(figure.data)
    .map(([name, value]) => ` data-${name}="${escapeHtml(value)}"`)
    .join('');
  return `<figure class="plot" id="${figure.id}" data-plot="${figure.kind}"${attributes}>${figure.svg}<figcaption>${escapeHtml(figure.caption)}</figcaption></figure>`;
}

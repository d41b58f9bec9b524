/**
 * A vega-lite spec drawn as an SVG string in Node: vega-lite compiles it to a vega spec, and a
 * headless vega view (no canvas, no DOM) writes the SVG markup. Vega escapes the text it draws, so data
 * strings in a spec's values are safe; they must never be used as field names (vega-lite reads dots
 * and brackets in a field name as nested access).
 */
import * as vega from 'vega';
import { compile, type TopLevelSpec } from 'vega-lite';

/** Look shared by every plot: small type, no outer border, no per-mark ARIA labels (they bloat large plots). */
const PLOT_CONFIG = {
  font: 'system-ui, -apple-system, "Segoe UI", Roboto, Helvetica, Arial, sans-serif',
  view: { stroke: null },
  axis: { labelFontSize: 10, titleFontSize: 11, labelLimit: 120 },
  legend: { labelFontSize: 10, titleFontSize: 11, labelLimit: 160 },
  title: { fontSize: 12, anchor: 'start' as const },
  mark: { aria: false },
};

/**
 * Renders `spec` to SVG. Ids vega generates (clip paths, gradients) come from process-wide counters;
 * they are renamed `<idPrefix>-<n>` so several SVGs can sit in one page without clashing and the same
 * report always gives the same markup.
 */
export async function vegaLiteSvg(spec: TopLevelSpec, idPrefix: string): Promise<string> {
  const logger = vega.logger(vega.Error);
  const compiled = compile({ ...spec, config: { ...PLOT_CONFIG, ...spec.config } } as TopLevelSpec, { logger }).spec;
  const view = new vega.View(vega.parse(compiled), { renderer: 'none', logger });
  try {
    return renumberIds(await view.toSVG(), idPrefix);
  } finally {
    view.finalize();
  }
}

function renumberIds(svg: string, prefix: string): string {
  const renamed = new Map<string, string>();
  for (const match of svg.matchAll(/\sid="([^"]+)"/g)) {
    if (!renamed.has(match[1]!)) renamed.set(match[1]!, `${prefix}-${renamed.size + 1}`);
  }
  if (renamed.size === 0) return svg;
  return svg
    .replace(/(\sid=")([^"]+)"/g, (_whole, head: string, id: string) => `${head}${renamed.get(id) ?? id}"`)
    .replace(/url\(#([^)]+)\)/g, (whole, id: string) => (renamed.has(id) ? `url(#${renamed.get(id)})` : whole))
    .replace(/href="#([^"]+)"/g, (whole, id: string) => (renamed.has(id) ? `href="#${renamed.get(id)}"` : whole));
}

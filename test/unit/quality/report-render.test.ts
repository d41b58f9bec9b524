import { beforeAll, describe, expect, it } from 'vitest';
import type { QualityReport } from '../../../model/quality/quality-report.js';
import { formatInterval, formatScore } from '../../../model/quality/report/number-format.js';
import { MOST_POINTS_PER_SERIES } from '../../../model/quality/report/projection-plot.js';
import { renderReportHtml } from '../../../model/quality/report/render-report.js';
import { escapeHtml } from '../../../model/quality/report/html-text.js';
import { fixtureReport, HOSTILE_CLASS, RARE_CLASSES } from './report-fixture.js';

/** The `<figure>` elements of a kind, each with its markup. */
function figures(html: string, kind: string): string[] {
  return [...html.matchAll(new RegExp(`<figure class="plot" id="plot-${kind}-\\d+" data-plot="${kind}"[\\s\\S]*?</figure>`, 'g'))].map((match) => match[0]);
}

/** The cells of the table row whose head cells are `heads` (the first may be a row-spanning cell above). */
function rowCells(html: string, table: string, metric: string, occurrence = 0): string[] {
  const body = new RegExp(`data-table="${table}"[^>]*>[\\s\\S]*?</table>`).exec(html)![0];
  const rows = body.split('<tr>').filter((row) => row.includes(`<th scope="row">${metric}</th>`));
  return [...rows[occurrence]!.matchAll(/<td[^>]*>([^<]*)<\/td>/g)].map((match) => match[0]);
}

let html = '';
beforeAll(async () => {
  html = await renderReportHtml(fixtureReport());
});

describe('renderReportHtml', () => {
  it('draws every plot: a distribution per rare class and field, a correlation map per class, one projection', () => {
    const distributions = figures(html, 'distribution');
    expect(distributions).toHaveLength(RARE_CLASSES.length * 3);
    expect(figures(html, 'correlation')).toHaveLength(RARE_CLASSES.length);
    expect(figures(html, 'projection')).toHaveLength(1);
    for (const figure of [...distributions, ...figures(html, 'correlation'), ...figures(html, 'projection')]) {
      // Each holds one SVG with drawn marks.
      expect(figure.match(/<svg /g)).toHaveLength(1);
      expect(figure).toMatch(/<path [^>]*d="M[^"]+"/);
    }
    expect(distributions[0]).toContain('data-class="snow" data-field="temp_max"');
    expect(distributions[5]).toContain(`data-class="${escapeHtml(HOSTILE_CLASS)}" data-field="sky.cover"`);
  });

  it('keeps every element id unique, so the inline SVGs do not share clip paths or gradients', () => {
    const ids = [...html.matchAll(/\sid="([^"]+)"/g)].map((match) => match[1]);
    expect(ids.length).toBeGreaterThan(10);
    expect(new Set(ids).size).toBe(ids.length);
    for (const [, reference] of html.matchAll(/url\(#([^)]+)\)/g)) expect(ids).toContain(reference);
  });

  it('escapes every text from data: class names, categories, the source, the verdict', () => {
    expect(html).not.toContain(HOSTILE_CLASS);
    expect(html).not.toMatch(/<script/i);
    expect(html).not.toContain('<overcast>');
    expect(html).not.toContain('<weather>');
    expect(html).toContain(escapeHtml(HOSTILE_CLASS));
    expect(html).toContain('&lt;overcast&gt;');
    expect(html).toContain('<title>raretide quality report — data/&lt;weather&gt;.avro</title>');
    expect(html).toContain('0.52 &lt;vs&gt; SMOTE&#39;s 0.46.');
  });

  it('prints scores as "estimate [low, high]" and marks the best of each row', () => {
    expect(formatInterval({ estimate: 0.52, low: 0.47, high: 0.58 })).toBe('0.52 [0.47, 0.58]');
    expect(formatInterval({ estimate: 0.5, low: Number.NaN, high: 1 })).toBe('0.50 [n/a, 1.00]');
    expect(formatScore(Number.POSITIVE_INFINITY)).toBe('n/a');
    // Columns: no augmentation, duplication, SMOTE, Gaussian copula, VAE.
    const prAuc = rowCells(html, 'usefulness-logistic-regression', 'PR-AUC');
    expect(prAuc).toEqual([
      '<td>0.40 [0.35, 0.45]</td>',
      '<td>0.43 [0.38, 0.48]</td>',
      '<td>0.46 [0.41, 0.51]</td>',
      '<td>0.49 [0.44, 0.54]</td>',
      '<td class="best">0.52 [0.47, 0.58]</td>',
    ]);
    // Detection AUC: closest to 0.5 is best (duplication's copies are indistinguishable, and flagged in privacy).
    expect(rowCells(html, 'fidelity', 'detection AUC (best 0.5)')[0]).toBe('<td class="best">0.50 [0.47, 0.53]</td>');
    const copies = rowCells(html, 'privacy', 'exact copies of train records (must be 0)');
    expect(copies[0]).toBe('<td class="warn">40</td>');
    expect(copies.slice(1, 4)).toEqual(['<td>0</td>', '<td>0</td>', '<td>0</td>']);
  });

  it('puts the verdict first, then the caution and the input, and names every baseline', () => {
    const order = ['id="verdict"', 'id="caution"', 'id="input"', 'id="usefulness"', 'id="fidelity"', 'id="privacy"', 'id="distributions"', 'id="projection"'].map((marker) =>
      html.indexOf(marker),
    );
    expect(order.every((position) => position > 0)).toBe(true);
    expect([...order].sort((a, b) => a - b)).toEqual(order);
    expect(html).toMatch(/never measure a model on them/);
    expect(html).toMatch(/domain experts/);
    for (const name of ['no augmentation', 'duplication', 'SMOTE', 'Gaussian copula', 'VAE (raretide)']) expect(html).toContain(`<th scope="col">${name}</th>`);
    expect(html).toContain('<dt>temperature</dt><dd>0.80</dd>');
  });

  it('works offline: no scripts, no external resources, a policy that forbids both', () => {
    expect(html).toContain(`<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'">`);
    const urls = [...html.matchAll(/https?:\/\/[^\s"')]+/g)].map((match) => match[0]);
    // Only XML namespace names, which are identifiers, never fetched.
    expect(new Set(urls)).toEqual(new Set(['http://www.w3.org/2000/svg', 'http://www.w3.org/1999/xlink']));
    expect(html).not.toMatch(/\s(src|srcset)=|<link|<img|@import|url\((?!#)/i);
  });

  it('gives the same page for the same report', async () => {
    expect(await renderReportHtml(fixtureReport())).toBe(html);
  });

  it('renders a report where no generator made records, saying there is nothing to compare', async () => {
    const report = fixtureReport();
    const bare: QualityReport = {
      ...report,
      generators: report.generators.filter((generator) => generator.generator === 'none'),
      plots: { distributions: {}, correlations: {}, projection: [] },
    };
    const page = await renderReportHtml(bare);
    expect(figures(page, 'distribution')).toHaveLength(0);
    expect(page.match(/No generator made records to compare\./g)).toHaveLength(2);
    expect(page).toContain('No points to project.');
    expect(rowCells(page, 'usefulness-random-forest', 'PR-AUC')).toEqual(['<td>0.50 [0.45, 0.55]</td>']);
  });

  it('thins a projection with too many points evenly, and says so', async () => {
    const report = fixtureReport();
    const many = Array.from({ length: MOST_POINTS_PER_SERIES * 2 + 1 }, (_, index) => ({ x: index, y: index % 7, origin: 'vae' as const, className: 'snow' }));
    const page = await renderReportHtml({ ...report, plots: { distributions: {}, correlations: {}, projection: many } });
    const [projection] = figures(page, 'projection');
    expect(projection).toContain(`data-points="${MOST_POINTS_PER_SERIES}"`);
    expect(projection).toMatch(/evenly thinned/);
  });
});

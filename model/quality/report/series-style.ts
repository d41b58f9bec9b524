/**
 * Names and colours of the series the report compares, the same in every table and plot: the real
 * records, and each generator.
 */
import { GENERATOR_NAMES, type GeneratorName } from '../quality-report.js';

export type SeriesName = 'real' | GeneratorName;

const LABELS: Readonly<Record<SeriesName, string>> = {
  real: 'real',
  none: 'no augmentation',
  duplication: 'duplication',
  smote: 'SMOTE',
  'gaussian-copula': 'Gaussian copula',
  vae: 'VAE (raretide)',
};

// Colour-blind-safe qualitative palette (Okabe & Ito, "Color Universal Design", 2008), real in black.
const COLOURS: Readonly<Record<SeriesName, string>> = {
  real: '#222222',
  none: '#999999',
  duplication: '#E69F00',
  smote: '#56B4E9',
  'gaussian-copula': '#009E73',
  vae: '#D55E00',
};

export function seriesLabel(series: SeriesName): string {
  return LABELS[series];
}

/** Every series in report order, for fixed colour scales: a series keeps its colour across plots. */
export const SERIES_ORDER: readonly SeriesName[] = ['real', ...GENERATOR_NAMES];

/** A vega-lite colour scale over the given series, in report order, with their fixed colours. */
export function seriesColourScale(present: readonly SeriesName[]): { domain: string[]; range: string[] } {
  const ordered = SERIES_ORDER.filter((series) => present.includes(series));
  return { domain: ordered.map(seriesLabel), range: ordered.map((series) => COLOURS[series]) };
}

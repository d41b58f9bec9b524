import { renderReference } from '../../config/reference.js';
import { renderMetricsTable } from '../../connector/ops/worker-metrics.js';
import { provenanceHeaderTable } from '../../connector/pipeline/provenance.js';

/**
 * README sections generated from the code they document, so they cannot drift: each lives between
 * `<!-- generated:NAME -->` and `<!-- /generated:NAME -->`. `npm run docs` rewrites them; a unit test
 * fails when the README differs from what the code would write.
 */
export const GENERATED_SECTIONS: Readonly<Record<string, () => string>> = {
  'config-reference': () => renderReference(),
  'provenance-headers': () => provenanceHeaderTable(),
  metrics: () => renderMetricsTable(),
};

const marker = (name: string): { open: string; close: string } => ({
  open: `<!-- generated:${name} -->`,
  close: `<!-- /generated:${name} -->`,
});

/** The README with every generated section rewritten from the code. Throws when a marker is missing. */
export function withGeneratedSections(readme: string): string {
  let text = readme;
  for (const [name, render] of Object.entries(GENERATED_SECTIONS)) {
    const { open, close } = marker(name);
    const start = text.indexOf(open);
    const end = text.indexOf(close);
    if (start < 0 || end < start) throw new Error(`README.md lacks the markers ${open} … ${close}`);
    text = `${text.slice(0, start + open.length)}\n${render().trim()}\n${text.slice(end)}`;
  }
  return text;
}

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { withGeneratedSections } from '../../tools/readme-sections.js';

describe('README.md', () => {
  it('carries the config reference, provenance headers and metrics exactly as the code defines them (run `npm run docs`)', () => {
    const readme = readFileSync(new URL('../../../README.md', import.meta.url), 'utf8');
    expect(readme).toBe(withGeneratedSections(readme));
  });
});

import { describe, expect, expectTypeOf, it } from 'vitest';
import { parseConfig } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import type { SourceConfig } from '../../../config/schema.js';
import { configErrorOf, VALID_YAML } from './helpers.js';

describe('requireSections', () => {
  it('returns the config with the sections typed as present', () => {
    const config = requireSections(parseConfig(VALID_YAML, 'raretide.yaml'), 'run', ['kafka', 'source', 'sink']);
    expectTypeOf(config.source).toEqualTypeOf<SourceConfig>();
    expect(config.source.topic).toBe('sorter.events');
  });

  it('names each missing section, the command that needs it and its required entries', () => {
    const config = parseConfig('training: {epochs: 3}\n', 'fit.yaml');
    const error = configErrorOf(() => requireSections(config, 'run', ['source', 'label', 'rateCap']));
    expect(error.message.split('\n')).toEqual([
      'config error: source is missing: `raretide run` needs a source section (with topic, group, framing); see config/examples/minimal.yaml',
      'config error: label is missing: `raretide run` needs a label section (with from); see config/examples/minimal.yaml',
      'config error: rateCap is missing: `raretide run` needs a rateCap section (with perSecond, burst); see config/examples/minimal.yaml',
    ]);
  });
});

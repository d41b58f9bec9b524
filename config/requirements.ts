import * as z from 'zod';
import { ConfigError, type ConfigProblem } from './errors.js';
import { configSchema, type RaretideConfig } from './schema.js';
import { peel } from './schema-walk.js';

/** Sections the schema lets a file leave out; commands that need one ask for it here. */
export type OptionalSection = 'kafka' | 'source' | 'sink' | 'label' | 'balance' | 'rateCap' | 'model';

/** A config in which the named sections are known to be present. */
export type ConfigWith<Section extends OptionalSection> = RaretideConfig & {
  [Name in Section]-?: NonNullable<RaretideConfig[Name]>;
};

/** The entries a section must have, read from the schema: `topic, group, framing`. */
function requiredEntries(section: OptionalSection): string[] {
  const { core } = peel(configSchema.shape[section]);
  if (core instanceof z.ZodObject) {
    return Object.entries(core.shape)
      .filter(([, entry]) => !peel(entry as z.ZodType).optional)
      .map(([key]) => key);
  }
  if (core instanceof z.ZodDiscriminatedUnion) return [core._zod.def.discriminator];
  return [];
}

/**
 * Checks that a command's sections are present, naming each missing one, the command that needs it and
 * what to write; returns the config with those sections typed as present.
 */
export function requireSections<Section extends OptionalSection>(
  config: RaretideConfig,
  command: string,
  sections: readonly Section[],
): ConfigWith<Section> {
  const problems: ConfigProblem[] = sections
    .filter((section) => config[section] === undefined)
    .map((section) => ({
      path: section,
      code: 'missing_section',
      message:
        `config error: ${section} is missing: \`raretide ${command}\` needs a ${section} section` +
        ` (with ${requiredEntries(section).join(', ')}); see config/examples/minimal.yaml`,
    }));
  if (problems.length > 0) throw new ConfigError(problems);
  return config as ConfigWith<Section>;
}

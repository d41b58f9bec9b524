import { UsageError } from '../../config/errors.js';
import type { FieldPolicy } from '../../config/sections/fields.js';
import { fieldPolicySchema } from '../../config/sections/fields.js';

/**
 * What the codec does with a field when it makes a synthetic record (the config's field policy):
 * - `learn`: the model learns it (continuous, one-hot or presence features) and the decode supplies it;
 * - `copy`: taken unchanged from the source record;
 * - `fresh`: a new identifier (uuid, id string of the same shape, random number or bytes);
 * - `null`: set to null (nullable fields only).
 */
export type { FieldPolicy };

export const FIELD_POLICIES: readonly FieldPolicy[] = fieldPolicySchema.options;

/** How to build a feature codec from a schema and a sample. */
export interface FeatureCodecOptions {
  /**
   * Dotted path of the field holding the class (e.g. `outcome` or `meta.kind`); kept out of the
   * features and copied from the source record. Without it the codec has no classes.
   * @default undefined
   */
  readonly labelPath?: string | undefined;
  /**
   * Policy per dotted field path, overriding the inferred one. A record path with `copy`, `fresh`
   * or `null` treats the whole record as one field.
   * @default {}
   */
  readonly policies?: Readonly<Record<string, FieldPolicy>> | undefined;
  /**
   * A string field is one-hot encoded when the sample holds at most this many distinct values (and
   * they repeat: at most half as many distinct values as values); otherwise it is copied.
   * @default 32
   */
  readonly maxCategories?: number | undefined;
  /**
   * Knots stored per continuous field. Fields with at most this many distinct sample values keep
   * them all and round-trip exactly; others keep this many quantiles.
   * @default 1024
   */
  readonly quantiles?: number | undefined;
}

export interface ResolvedCodecOptions {
  readonly labelPath: string | undefined;
  readonly policies: ReadonlyMap<string, FieldPolicy>;
  readonly maxCategories: number;
  readonly quantiles: number;
}

export const DEFAULT_MAX_CATEGORIES = 32;
export const DEFAULT_QUANTILES = 1024;

function integerAtLeast(name: string, value: number | undefined, fallback: number, minimum: number): number {
  if (value === undefined) return fallback;
  if (!Number.isInteger(value) || value < minimum) {
    throw new UsageError(
      `Expected feature codec option \`${name}\` to be an integer from ${minimum} up, got \`${String(value)}\`; ` +
        `omit it for the default ${fallback}.`,
      { code: 'features.option' },
    );
  }
  return value;
}

/** Applies defaults and checks ranges; errors name the option and the fix. */
export function resolveCodecOptions(options: FeatureCodecOptions = {}): ResolvedCodecOptions {
  const policies = new Map<string, FieldPolicy>();
  for (const [path, policy] of Object.entries(options.policies ?? {})) {
    if (!FIELD_POLICIES.includes(policy)) {
      throw new UsageError(
        `Unknown policy \`${String(policy)}\` for field \`${path}\`; use one of ${FIELD_POLICIES.join(', ')}.`,
        { code: 'features.policy' },
      );
    }
    policies.set(path, policy);
  }
  return {
    labelPath: options.labelPath,
    policies,
    maxCategories: integerAtLeast('maxCategories', options.maxCategories, DEFAULT_MAX_CATEGORIES, 1),
    quantiles: integerAtLeast('quantiles', options.quantiles, DEFAULT_QUANTILES, 2),
  };
}

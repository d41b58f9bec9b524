import type { FreshKind } from './field-plan.js';
import type { UniformRandom } from './fresh-values.js';
import { freshValue } from './fresh-values.js';
import type { EmpiricalMarginal } from './marginal.js';

/**
 * Reads one field's value from the features at `base`, taking copied values from `source` (the same
 * field of the source record). Total: any numbers, NaN and ±Infinity included, give a value of the
 * field's type. Built once per codec as closures.
 */
export type FieldDecoder = (features: ArrayLike<number>, base: number, source: unknown, random: UniformRandom) => unknown;

export function recordDecoder(fields: readonly { readonly name: string; readonly decode: FieldDecoder }[]): FieldDecoder {
  return (features, base, source, random) => {
    const sourceRecord = source as Record<string, unknown> | null | undefined;
    const record: Record<string, unknown> = {};
    for (const field of fields) record[field.name] = field.decode(features, base, sourceRecord?.[field.name], random);
    return record;
  };
}

/** Present when the presence feature is ≥ 0.5; a value that needs copied fields stays null when the source's is. */
export function nullableDecoder(presenceOffset: number, needsSource: boolean, decodeValue: FieldDecoder): FieldDecoder {
  return (features, base, source, random) => {
    if (!(features[base + presenceOffset]! >= 0.5)) return null;
    if (needsSource && (source === null || source === undefined)) return null;
    return decodeValue(features, base, source, random);
  };
}

/** Through the marginal, so always within the observed range; int and long rounded. */
export function continuousDecoder(offset: number, integer: boolean, marginal: EmpiricalMarginal): FieldDecoder {
  if (integer) {
    // `+ 0` turns −0 into 0.
    return (features, base) => Math.round(marginal.decode(features[base + offset]!)) + 0;
  }
  return (features, base) => marginal.decode(features[base + offset]!);
}

/** The largest feature of the group wins; NaN never does; the first wins ties. */
export function categoricalDecoder(offset: number, valueType: 'enum' | 'boolean' | 'string', categories: readonly string[]): FieldDecoder {
  const width = categories.length;
  return (features, base) => {
    let best = Number.NEGATIVE_INFINITY;
    let index = 0;
    const start = base + offset;
    for (let i = 0; i < width; i++) {
      const score = features[start + i]!;
      if (score > best) {
        best = score;
        index = i;
      }
    }
    return valueType === 'boolean' ? index === 1 : categories[index];
  };
}

/** A new identifier; a nullable field whose source value is null stays null. */
export function freshDecoder(kind: FreshKind, size: number, nullable: boolean): FieldDecoder {
  return (_features, _base, source, random) => {
    if (nullable && (source === null || source === undefined)) return null;
    return freshValue(kind, source, random, size);
  };
}

/** The source value itself, shared rather than cloned: records are treated as immutable. */
export const copyDecoder: FieldDecoder = (_features, _base, source) => source;

export const nullDecoder: FieldDecoder = () => null;

import type { EmpiricalMarginal } from './marginal.js';

/**
 * Writes one field's features at `base` in `out`, which the caller has zeroed over the layout's width:
 * absent (gated) values leave zeros, the neutral input. Built once per codec as closures, so the
 * per-record loop does no dispatch on field kinds.
 */
export type FieldEncoder = (value: unknown, out: Float32Array, base: number) => void;

/** Encodes the fields that have features; copied, fresh and null fields cost nothing. */
export function recordEncoder(fields: readonly { readonly name: string; readonly encode: FieldEncoder }[]): FieldEncoder {
  return (value, out, base) => {
    const record = value as Record<string, unknown>;
    for (const field of fields) field.encode(record[field.name], out, base);
  };
}

export function nullableEncoder(presenceOffset: number, encodeValue: FieldEncoder): FieldEncoder {
  return (value, out, base) => {
    if (value === null || value === undefined) return;
    out[base + presenceOffset] = 1;
    encodeValue(value, out, base);
  };
}

/** Non-finite numbers encode like out-of-range values: ±Infinity to the extreme knots, NaN to the median. */
export function continuousEncoder(offset: number, marginal: EmpiricalMarginal): FieldEncoder {
  return (value, out, base) => {
    out[base + offset] = marginal.encode(typeof value === 'number' ? value : Number(value));
  };
}

/** A string category not seen in the sample encodes as the first category, the most frequent. */
export function categoricalEncoder(offset: number, valueType: 'enum' | 'boolean' | 'string', indexOf: ReadonlyMap<string, number>): FieldEncoder {
  if (valueType === 'boolean') {
    return (value, out, base) => {
      out[base + offset + (value === true ? 1 : 0)] = 1;
    };
  }
  return (value, out, base) => {
    out[base + offset + (indexOf.get(value as string) ?? 0)] = 1;
  };
}

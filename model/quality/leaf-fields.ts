/**
 * The leaf fields the model learns, read from records for the per-field comparisons: one per block
 * of the feature layout. Copied and fresh fields (and the label) have no block: they are taken from
 * the source record, so comparing them would measure nothing.
 *
 * - a continuous block is a number field (KS); absent values (a null nullable) are left out;
 * - a categorical block is an enum, boolean or low-cardinality string field (TVD over its values);
 * - a presence block is the null-vs-present status of a nullable field (TVD over `null`/`present`),
 *   reported as `<path> (present)` so it is not confused with the field's values.
 */
import type { AvroRecord } from '../features/avro-types.js';
import type { FeatureLayout } from '../features/layout.js';

export type LeafField =
  | { readonly field: string; readonly kind: 'continuous'; readonly featureOffset: number; read(record: AvroRecord): number | undefined }
  | { readonly field: string; readonly kind: 'categorical'; readonly categories: readonly string[]; read(record: AvroRecord): string | undefined };

export const PRESENCE_SUFFIX = ' (present)';
export const PRESENCE_CATEGORIES = ['null', 'present'] as const;

export function leafFields(layout: FeatureLayout): LeafField[] {
  return layout.blocks.map((block): LeafField => {
    const at = valueAt(block.path);
    switch (block.kind) {
      case 'continuous':
        return {
          field: block.path,
          kind: 'continuous',
          featureOffset: block.offset,
          read: (record) => {
            const value = at(record);
            return typeof value === 'number' ? value : typeof value === 'bigint' ? Number(value) : undefined;
          },
        };
      case 'categorical':
        return {
          field: block.path,
          kind: 'categorical',
          categories: block.categories,
          read: (record) => {
            const value = at(record);
            return value === null || value === undefined ? undefined : String(value);
          },
        };
      case 'presence':
        return {
          field: `${block.path}${PRESENCE_SUFFIX}`,
          kind: 'categorical',
          categories: PRESENCE_CATEGORIES,
          read: (record) => {
            const value = at(record);
            return value === null || value === undefined ? PRESENCE_CATEGORIES[0] : PRESENCE_CATEGORIES[1];
          },
        };
    }
  });
}

/** Reads a dotted path; null when a record on the way is null. */
function valueAt(path: string): (record: AvroRecord) => unknown {
  const segments = path.split('.');
  return (record) => {
    let value: unknown = record;
    for (const segment of segments) {
      if (value === null || value === undefined) return null;
      value = (value as Record<string, unknown>)[segment];
    }
    return value;
  };
}

/** The defined values of a leaf over records. */
export function leafValues<T extends LeafField>(field: T, records: readonly AvroRecord[]): NonNullable<ReturnType<T['read']>>[] {
  const values: NonNullable<ReturnType<T['read']>>[] = [];
  for (const record of records) {
    const value = field.read(record) as ReturnType<T['read']>;
    if (value !== undefined) values.push(value as NonNullable<ReturnType<T['read']>>);
  }
  return values;
}

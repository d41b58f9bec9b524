import * as z from 'zod';
import { dottedPath } from './common.js';

/**
 * Per-field policy, overriding the one inferred from the schema and the data:
 * `learn` (modelled), `copy` (taken from the source record), `fresh` (a new identifier), `null`.
 */
export const fieldPolicySchema = z
  .enum(['learn', 'copy', 'fresh', 'null'])
  .meta({ description: '`learn` (modelled), `copy` (from the source record), `fresh` (new identifier) or `null`.' });

export const fieldsSection = z
  .record(dottedPath().meta({ title: 'field.path' }), fieldPolicySchema)
  .default({})
  .meta({
    description: 'Field policies overriding the inferred ones, by dotted field path.',
    examples: [{ 'parcel.id': 'fresh', 'reading.note': 'null' }],
  });

export type FieldPolicy = z.infer<typeof fieldPolicySchema>;
export type FieldsConfig = z.infer<typeof fieldsSection>;

import * as z from 'zod';
import { RaretideError } from '../../config/errors.js';
import { fieldPolicySchema } from '../../config/sections/fields.js';
import type { AvroSchemaJson } from './avro-types.js';
import type { FieldPlan, LabelPlan, RecordPlan } from './field-plan.js';

/** The stored form of a feature codec, kept in the model directory. */
export const CODEC_FORMAT = 'raretide.feature-codec';
/** Bumped whenever a stored codec would decode differently; older versions are refused, not guessed at. */
export const CODEC_VERSION = 1;

export interface FeatureCodecJson {
  readonly format: typeof CODEC_FORMAT;
  readonly version: typeof CODEC_VERSION;
  /** The record schema the codec was built for, as given. */
  readonly schema: AvroSchemaJson;
  readonly options: {
    readonly labelPath: string | null;
    readonly policies: Readonly<Record<string, string>>;
    readonly maxCategories: number;
    readonly quantiles: number;
  };
  /** Records in the sample the codec was built from. */
  readonly sampleSize: number;
  readonly label: LabelPlan | null;
  readonly plan: RecordPlan;
}

const fieldInfo = z.object({
  path: z.string(),
  avroType: z.string(),
  policy: z.union([fieldPolicySchema, z.literal('label')]),
  reason: z.string(),
});

const marginal = z
  .object({
    values: z.array(z.number()).min(1),
    counts: z.array(z.number().int().positive()),
    below: z.array(z.number().int().nonnegative()),
    n: z.number().int().positive(),
    distinct: z.number().int().positive(),
  })
  .refine(
    (m) =>
      m.counts.length === m.values.length &&
      m.below.length === m.values.length &&
      m.values.every((value, i) => i === 0 || value > m.values[i - 1]!),
    { message: 'knots must be increasing, with one count and one rank per knot' },
  );

const fieldPlan: z.ZodType<FieldPlan> = z.lazy(() =>
  z.union([
    recordPlan,
    z.object({ kind: z.literal('nullable'), info: fieldInfo, needsSource: z.boolean(), value: fieldPlan }),
    z.object({ kind: z.literal('continuous'), info: fieldInfo, integer: z.boolean(), marginal }),
    z.object({
      kind: z.literal('categorical'),
      info: fieldInfo,
      valueType: z.enum(['enum', 'boolean', 'string']),
      categories: z.array(z.string()).min(1),
      counts: z.array(z.number().int().nonnegative()),
    }),
    z.object({
      kind: z.literal('fresh'),
      info: fieldInfo,
      fresh: z.enum(['uuid', 'string', 'int', 'long', 'bytes', 'fixed']),
      size: z.number().int().nonnegative().optional(),
      nullable: z.boolean(),
    }),
    z.object({ kind: z.literal('copy'), info: fieldInfo }),
    z.object({ kind: z.literal('null'), info: fieldInfo }),
  ]),
);

const recordPlan = z.object({
  kind: z.literal('record'),
  path: z.string(),
  fields: z.array(z.object({ name: z.string(), plan: fieldPlan })),
});

const codecJson = z.object({
  format: z.literal(CODEC_FORMAT),
  version: z.number().int(),
  schema: z.union([z.string(), z.record(z.string(), z.unknown()), z.array(z.unknown())]),
  options: z.object({
    labelPath: z.string().nullable(),
    policies: z.record(z.string(), fieldPolicySchema),
    maxCategories: z.number().int().positive(),
    quantiles: z.number().int().min(2),
  }),
  sampleSize: z.number().int().nonnegative(),
  label: z
    .object({
      path: z.string(),
      avroType: z.string(),
      classes: z.array(z.object({ name: z.string(), count: z.number().int().nonnegative() })),
    })
    .nullable(),
  plan: recordPlan,
});

/** The error for a stored codec that cannot be used. */
export function corruptCodecError(message: string, cause?: unknown): RaretideError {
  return new RaretideError('features.codec-json', `Stored feature codec ${message}; refit the model to rebuild it.`, {
    cause,
  });
}

/** Checks the stored form's shape and version; errors say what is wrong and that a refit rebuilds it. */
export function parseCodecJson(json: unknown): FeatureCodecJson {
  const version = (json as { version?: unknown } | null)?.version;
  if (typeof version === 'number' && version !== CODEC_VERSION) {
    throw corruptCodecError(`has version ${version}, but this raretide reads version ${CODEC_VERSION}`);
  }
  const parsed = codecJson.safeParse(json);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw corruptCodecError(`is malformed at \`${issue?.path.join('.') ?? ''}\`: ${issue?.message ?? 'invalid'}`, parsed.error);
  }
  return parsed.data as FeatureCodecJson;
}

/** The feature codec: Avro records ⇄ feature vectors for the model (see layout.ts for the contract). */
export type { AvroRecord, AvroSchemaJson } from './avro-types.js';
export type { FeatureCodecJson } from './codec-json.js';
export { CODEC_FORMAT, CODEC_VERSION } from './codec-json.js';
export type { DecodeOptions } from './feature-codec.js';
export { FeatureCodec } from './feature-codec.js';
export type { FieldSummary, FieldTable, FieldTableRow } from './field-table.js';
export { formatSummary, renderFieldTable } from './field-table.js';
export type { UniformRandom } from './fresh-values.js';
export type { CategoricalBlock, ContinuousBlock, FeatureBlock, FeatureLayout, PresenceBlock } from './layout.js';
export { assertValidLayout } from './layout.js';
export type { FeatureCodecOptions, FieldPolicy } from './options.js';
export { DEFAULT_MAX_CATEGORIES, DEFAULT_QUANTILES } from './options.js';
export { standardNormalCdf, standardNormalQuantile } from './normal.js';

import { RaretideError, UsageError } from '../../config/errors.js';
import type { AvroRecord, AvroSchemaJson } from './avro-types.js';
import { parseSchemaWithLogicalTypes } from './avro-types.js';
import type { FeatureCodecJson } from './codec-json.js';
import { CODEC_FORMAT, CODEC_VERSION, corruptCodecError, parseCodecJson } from './codec-json.js';
import { compilePlan } from './compiled-plan.js';
import type { FieldDecoder } from './decode-record.js';
import type { FieldEncoder } from './encode-record.js';
import type { FieldTable } from './field-table.js';
import { describePlan } from './field-table.js';
import type { UniformRandom } from './fresh-values.js';
import { inferPlan } from './infer-plan.js';
import type { FeatureLayout } from './layout.js';
import type { FeatureCodecOptions } from './options.js';
import { resolveCodecOptions } from './options.js';

export interface DecodeOptions {
  /** Row of `features` to read when it holds a batch (row-major, `layout.width` per row). @default 0 */
  readonly row?: number;
  /** Uniform [0, 1) source for `fresh` fields; required when the codec has any. */
  readonly random?: UniformRandom;
}

function requireRandom(): number {
  throw new RaretideError('features.random', 'Feature codec: a `fresh` field needs decode option `random`.');
}

/**
 * Turns records of one Avro record schema into feature vectors laid out as `layout` describes, and
 * feature vectors back into valid records, taking copied fields from a source record. Built from a
 * sample (`fromSample`) or from its stored form (`fromJSON`); immutable.
 */
export class FeatureCodec {
  readonly layout: FeatureLayout;
  /** Classes seen in the sample, in a stable order (enum symbol order, else sorted); empty without a label. */
  readonly classes: readonly string[];
  private readonly stored: FeatureCodecJson;
  private readonly encodeRecord: FieldEncoder;
  private readonly decodeRecord: FieldDecoder;
  private readonly usesRandom: boolean;
  private readonly labelSegments: readonly string[] | undefined;
  private readonly classIndex: ReadonlyMap<string, number>;

  private constructor(stored: FeatureCodecJson) {
    this.stored = stored;
    const compiled = compilePlan(stored.plan);
    this.layout = compiled.layout;
    this.encodeRecord = compiled.encode;
    this.decodeRecord = compiled.decode;
    this.usesRandom = compiled.usesRandom;
    this.labelSegments = stored.label === null ? undefined : stored.label.path.split('.');
    this.classes = stored.label === null ? [] : stored.label.classes.map((entry) => entry.name);
    this.classIndex = new Map(this.classes.map((name, index) => [name, index]));
  }

  /**
   * Builds a codec for `schema` (an Avro record schema in JSON form) from sample records, inferring a
   * policy for every field; `options` names the label and overrides policies. Throws UsageError naming
   * the field and the fix for impossible options (e.g. `null` on a non-nullable field).
   */
  static fromSample(schema: AvroSchemaJson, sample: Iterable<AvroRecord>, options: FeatureCodecOptions = {}): FeatureCodec {
    const resolved = resolveCodecOptions(options);
    const type = parseSchemaWithLogicalTypes(schema);
    const records = [...sample];
    const { root, label } = inferPlan(type, records, resolved);
    return new FeatureCodec({
      format: CODEC_FORMAT,
      version: CODEC_VERSION,
      schema,
      options: {
        labelPath: resolved.labelPath ?? null,
        policies: Object.fromEntries(resolved.policies),
        maxCategories: resolved.maxCategories,
        quantiles: resolved.quantiles,
      },
      sampleSize: records.length,
      label: label ?? null,
      plan: root,
    });
  }

  /** Rebuilds a codec from `toJSON()`'s output; refuses other versions and malformed input. */
  static fromJSON(json: unknown): FeatureCodec {
    const stored = parseCodecJson(json);
    try {
      parseSchemaWithLogicalTypes(stored.schema);
      return new FeatureCodec(stored);
    } catch (error) {
      throw corruptCodecError(`does not load (${(error as Error).message})`, error);
    }
  }

  /** The stored form: plain JSON data, versioned. */
  toJSON(): FeatureCodecJson {
    return this.stored;
  }

  /** The record schema the codec was built for. */
  get schema(): AvroSchemaJson {
    return this.stored.schema;
  }

  get width(): number {
    return this.layout.width;
  }

  get labelPath(): string | undefined {
    return this.stored.label?.path;
  }

  /** Classes with their counts in the sample the codec was built from. */
  get classCounts(): readonly { readonly name: string; readonly count: number }[] {
    return this.stored.label?.classes ?? [];
  }

  /** The record's class as text (enum symbol, string, `true`/`false`, decimal integer), or null when missing. */
  classOf(record: AvroRecord): string | null {
    if (this.labelSegments === undefined) return null;
    let value: unknown = record;
    for (const segment of this.labelSegments) {
      if (value === null || value === undefined) return null;
      value = (value as AvroRecord)[segment];
    }
    return value === null || value === undefined ? null : String(value);
  }

  /** Index of the record's class in `classes`, or −1 when it is missing or was not in the sample. */
  classIndexOf(record: AvroRecord): number {
    const name = this.classOf(record);
    return name === null ? -1 : (this.classIndex.get(name) ?? -1);
  }

  /**
   * The record's features. Writes row `row` of `out` (row-major, `width` per row) when given, else a new
   * array; returns the array written.
   */
  encode(record: AvroRecord, out?: Float32Array, row = 0): Float32Array {
    const width = this.layout.width;
    const target = out ?? new Float32Array(width);
    const base = row * width;
    if (!Number.isInteger(row) || row < 0 || base + width > target.length) {
      throw new RaretideError('features.width', `Feature codec: row ${row} of width ${width} does not fit an array of ${target.length}.`);
    }
    target.fill(0, base, base + width);
    this.encodeRecord(record, target, base);
    return target;
  }

  /** Features of many records, one row each. */
  encodeBatch(records: readonly AvroRecord[]): Float32Array {
    const out = new Float32Array(records.length * this.layout.width);
    for (let i = 0; i < records.length; i++) this.encode(records[i]!, out, i);
    return out;
  }

  /**
   * A new record from features (any numbers) and the source record it stands for: learned fields from
   * the features, copied fields (and the label) from `source`, `fresh` fields from `options.random`.
   * Valid per the schema whenever `source` is.
   */
  decode(features: ArrayLike<number>, source: AvroRecord, options: DecodeOptions = {}): AvroRecord {
    const width = this.layout.width;
    const row = options.row ?? 0;
    const base = row * width;
    if (!Number.isInteger(row) || row < 0 || base + width > features.length) {
      throw new RaretideError('features.width', `Feature codec: row ${row} of width ${width} does not fit ${features.length} features.`);
    }
    if (this.usesRandom && options.random === undefined) {
      throw new UsageError('Feature codec: some fields use policy `fresh`, so decode needs option `random` (a seeded uniform source).', {
        code: 'features.random',
      });
    }
    return this.decodeRecord(features, base, source, options.random ?? requireRandom) as AvroRecord;
  }

  /** The field table: every field with its type, policy, features and a summary of the sample. */
  describe(): FieldTable {
    return describePlan(this.stored.plan, this.stored.label ?? undefined, this.stored.sampleSize);
  }
}

/**
 * The provenance tag of an output record: where it came from and, for a synthetic record, everything
 * needed to make it again (model id, sample index, seed, temperature; the noise for those is fixed).
 *
 * On Kafka the tag travels as headers named `raretide.*`. Every value is UTF-8 text because node-rdkafka
 * does not carry header bytes safely (NODE-RDKAFKA.md, "Headers"): numbers are written as decimal text,
 * int64 offsets through bigint so nothing is lost beyond 2^53, and the temperature as ECMAScript
 * Number::toString, the shortest text that reads back as the same double. In Avro file output the tag of
 * a synthetic record is the `raretide_provenance` field (an originals' is null there).
 */

import { RaretideError } from '../../config/errors.js';

export interface SourceCoordinates {
  readonly topic: string;
  readonly partition: number;
  /** Kafka offsets are int64: bigint keeps every one exact. */
  readonly offset: bigint;
}

/** An original record passed through to the output. */
export interface OriginalTag {
  readonly kind: 'original';
  readonly source: SourceCoordinates;
}

/** A synthetic record made from `source`. */
export interface SyntheticTag {
  readonly kind: 'synthetic';
  readonly source: SourceCoordinates;
  /** Id (content hash) of the model directory that made it. */
  readonly modelId: string;
  /** Which of the k variants of the source record this is: 0 … k−1. */
  readonly sampleIndex: number;
  /** The run's seed (an unsigned 64-bit value). */
  readonly seed: bigint;
  /** Latent noise scale used (> 0). */
  readonly temperature: number;
}

export type ProvenanceTag = OriginalTag | SyntheticTag;

export type ProvenanceProblemCode = 'missing-header' | 'bad-header' | 'duplicate-header' | 'unexpected-header' | 'bad-field';

export interface ProvenanceProblem {
  readonly code: ProvenanceProblemCode;
  /** The header name (or Avro field name) at fault. */
  readonly name: string;
  /** What is wrong, naming the value. */
  readonly reason: string;
}

export type ProvenanceResult<T> = { readonly ok: true; readonly value: T } | { readonly ok: false; readonly problem: ProvenanceProblem };

export const PROVENANCE_HEADER_PREFIX = 'raretide.';

/** Header names, in the order they are written. */
export const PROVENANCE_HEADERS = {
  kind: 'raretide.kind',
  sourceTopic: 'raretide.source.topic',
  sourcePartition: 'raretide.source.partition',
  sourceOffset: 'raretide.source.offset',
  model: 'raretide.model',
  sample: 'raretide.sample',
  seed: 'raretide.seed',
  temperature: 'raretide.temperature',
} as const;

type HeaderField = keyof typeof PROVENANCE_HEADERS;

/** The README's header specification, one row per header (the table is generated from this). */
const HEADER_SPEC: readonly { field: HeaderField; meaning: string; example: string }[] = [
  { field: 'kind', meaning: '`synthetic`, or `original` for a source record passed through', example: 'synthetic' },
  { field: 'sourceTopic', meaning: 'topic (or input file name) of the source record', example: 'parcel-scans' },
  { field: 'sourcePartition', meaning: 'partition of the source record, decimal', example: '2' },
  { field: 'sourceOffset', meaning: 'offset of the source record, decimal (int64, exact)', example: '1048576' },
  { field: 'model', meaning: 'synthetic only: id (content hash) of the model that made the record', example: '9c1e5f0a7b3d2e64' },
  { field: 'sample', meaning: 'synthetic only: index of this variant among those of the source record, from 0', example: '0' },
  { field: 'seed', meaning: 'synthetic only: seed of the run, decimal', example: '1' },
  { field: 'temperature', meaning: 'synthetic only: latent noise scale, shortest decimal that reads back exactly', example: '0.8' },
];

const SYNTHETIC_ONLY: readonly HeaderField[] = ['model', 'sample', 'seed', 'temperature'];
const MAX_INT32 = 2n ** 31n - 1n;
const MAX_INT64 = 2n ** 63n - 1n;
const MAX_UINT64 = 2n ** 64n - 1n;
const DECIMAL = /^(0|[1-9][0-9]*)$/;
/** Text that ECMAScript Number::toString gives for a positive finite double. */
const NUMBER_TEXT = /^(?:[0-9]+(?:\.[0-9]+)?|\.[0-9]+)(?:e[+-][0-9]+)?$/;

/** The tag as Kafka headers: one `{name: text}` object per header, in a fixed order. */
export function toHeaders(tag: ProvenanceTag): { [name: string]: string }[] {
  checkTag(tag);
  const values: Partial<Record<HeaderField, string>> = {
    kind: tag.kind,
    sourceTopic: tag.source.topic,
    sourcePartition: String(tag.source.partition),
    sourceOffset: tag.source.offset.toString(),
  };
  if (tag.kind === 'synthetic') {
    values.model = tag.modelId;
    values.sample = String(tag.sampleIndex);
    values.seed = tag.seed.toString();
    values.temperature = String(tag.temperature);
  }
  return HEADER_SPEC.filter(({ field }) => values[field] !== undefined).map(({ field }) => ({ [PROVENANCE_HEADERS[field]]: values[field]! }));
}

/**
 * Reads a tag from headers as consumed (values are Buffers from node-rdkafka, or strings). Headers
 * without our prefix are ignored; ours must each appear once and be complete for their kind.
 */
export function fromHeaders(headers: readonly { readonly [name: string]: Buffer | string }[]): ProvenanceResult<ProvenanceTag> {
  const fieldByName = new Map<string, HeaderField>(Object.entries(PROVENANCE_HEADERS).map(([field, name]) => [name, field as HeaderField]));
  const text: Partial<Record<HeaderField, string>> = {};
  for (const header of headers) {
    for (const [name, value] of Object.entries(header)) {
      const field = fieldByName.get(name);
      if (field === undefined) continue;
      if (text[field] !== undefined) return problem('duplicate-header', name, 'appears more than once; the provenance is ambiguous');
      const decoded = typeof value === 'string' ? value : utf8(value);
      if (decoded === undefined) return problem('bad-header', name, 'is not valid UTF-8 text');
      text[field] = decoded;
    }
  }
  const need = (field: HeaderField): ProvenanceResult<string> =>
    text[field] === undefined
      ? problem('missing-header', PROVENANCE_HEADERS[field], 'is missing')
      : { ok: true, value: text[field] };

  const kind = need('kind');
  if (!kind.ok) return kind;
  if (kind.value !== 'synthetic' && kind.value !== 'original') {
    return problem('bad-header', PROVENANCE_HEADERS.kind, `is ${JSON.stringify(kind.value)}; expected "synthetic" or "original"`);
  }
  const topic = need('sourceTopic');
  if (!topic.ok) return topic;
  if (topic.value === '') return problem('bad-header', PROVENANCE_HEADERS.sourceTopic, 'is empty');
  const partition = parseDecimal(need('sourcePartition'), PROVENANCE_HEADERS.sourcePartition, MAX_INT32);
  if (!partition.ok) return partition;
  const offset = parseDecimal(need('sourceOffset'), PROVENANCE_HEADERS.sourceOffset, MAX_INT64);
  if (!offset.ok) return offset;
  const source = { topic: topic.value, partition: Number(partition.value), offset: offset.value };

  if (kind.value === 'original') {
    const stray = SYNTHETIC_ONLY.find((field) => text[field] !== undefined);
    if (stray !== undefined) return problem('unexpected-header', PROVENANCE_HEADERS[stray], 'is set on an original record; only synthetic records carry it');
    return { ok: true, value: { kind: 'original', source } };
  }
  const modelId = need('model');
  if (!modelId.ok) return modelId;
  if (modelId.value === '') return problem('bad-header', PROVENANCE_HEADERS.model, 'is empty');
  const sampleIndex = parseDecimal(need('sample'), PROVENANCE_HEADERS.sample, MAX_INT32);
  if (!sampleIndex.ok) return sampleIndex;
  const seed = parseDecimal(need('seed'), PROVENANCE_HEADERS.seed, MAX_UINT64);
  if (!seed.ok) return seed;
  const temperature = need('temperature');
  if (!temperature.ok) return temperature;
  const temperatureValue = Number(temperature.value);
  if (!NUMBER_TEXT.test(temperature.value) || !Number.isFinite(temperatureValue) || temperatureValue <= 0) {
    return problem('bad-header', PROVENANCE_HEADERS.temperature, `is ${JSON.stringify(temperature.value)}; expected a decimal number > 0 such as 0.8`);
  }
  return {
    ok: true,
    value: { kind: 'synthetic', source, modelId: modelId.value, sampleIndex: Number(sampleIndex.value), seed: seed.value, temperature: temperatureValue },
  };
}

/** The header specification as a markdown table (header, meaning, example) for the README. */
export function provenanceHeaderTable(): string {
  const rows = HEADER_SPEC.map(({ field, meaning, example }) => `| \`${PROVENANCE_HEADERS[field]}\` | ${meaning} | \`${example}\` |`);
  return ['| Header | Meaning | Example |', '|---|---|---|', ...rows].join('\n');
}

/** Name of the field added to Avro file output for provenance. */
export const PROVENANCE_FIELD_NAME = 'raretide_provenance';

/** Avro schema of a synthetic record's tag (the kind is implied: originals carry null instead). */
export const PROVENANCE_RECORD_SCHEMA = {
  type: 'record',
  name: 'SyntheticProvenance',
  namespace: 'raretide',
  doc: 'Where a synthetic record came from and how to make it again.',
  fields: [
    { name: 'sourceTopic', type: 'string', doc: 'Topic (or input file name) of the source record.' },
    { name: 'sourcePartition', type: 'int' },
    { name: 'sourceOffset', type: 'long' },
    { name: 'modelId', type: 'string', doc: 'Id (content hash) of the model that made the record.' },
    { name: 'sampleIndex', type: 'int', doc: 'Index of this variant among those of the source record, from 0.' },
    { name: 'seed', type: 'long' },
    { name: 'temperature', type: 'double' },
  ],
} as const;

/** The optional field appended to the output record schema: null for originals, the tag for synthetic. */
export const PROVENANCE_FIELD = {
  name: PROVENANCE_FIELD_NAME,
  type: ['null', PROVENANCE_RECORD_SCHEMA],
  default: null,
  doc: 'Provenance of a synthetic record; null for an original record.',
} as const;

/** A value of `PROVENANCE_RECORD_SCHEMA` with avsc's default types (long as a JS number). */
export interface ProvenanceRecord {
  readonly sourceTopic: string;
  readonly sourcePartition: number;
  readonly sourceOffset: number;
  readonly modelId: string;
  readonly sampleIndex: number;
  readonly seed: number;
  readonly temperature: number;
}

/**
 * The value of the provenance field: null for an original, the record for a synthetic one. avsc reads
 * and writes `long` as a JS number by default, so an offset or seed beyond 2^53 − 1 is refused rather than
 * rounded (no Kafka partition gets near that many records).
 */
export function toProvenanceRecord(tag: ProvenanceTag): ProvenanceRecord | null {
  if (tag.kind === 'original') return null;
  return {
    sourceTopic: tag.source.topic,
    sourcePartition: tag.source.partition,
    sourceOffset: safeLong(tag.source.offset, 'sourceOffset'),
    modelId: tag.modelId,
    sampleIndex: tag.sampleIndex,
    seed: safeLong(tag.seed, 'seed'),
    temperature: tag.temperature,
  };
}

/** Reads the provenance field as decoded by avsc: null (an original) or a synthetic tag. */
export function fromProvenanceRecord(value: unknown): ProvenanceResult<SyntheticTag | null> {
  if (value === null) return { ok: true, value: null };
  if (typeof value !== 'object') return problem('bad-field', PROVENANCE_FIELD_NAME, `is ${typeof value}; expected null or a record`);
  const record = value as Record<string, unknown>;
  const text = (name: string): ProvenanceResult<string> =>
    typeof record[name] === 'string' && record[name] !== ''
      ? { ok: true, value: record[name] }
      : problem('bad-field', name, `is ${describe(record[name])}; expected a non-empty string`);
  const whole = (name: string, max: bigint): ProvenanceResult<number> => {
    const field = record[name];
    return typeof field === 'number' && Number.isSafeInteger(field) && field >= 0 && BigInt(field) <= max
      ? { ok: true, value: field }
      : problem('bad-field', name, `is ${describe(field)}; expected a whole number from 0 to ${max}`);
  };
  const topic = text('sourceTopic');
  if (!topic.ok) return topic;
  const partition = whole('sourcePartition', MAX_INT32);
  if (!partition.ok) return partition;
  const offset = whole('sourceOffset', MAX_INT64);
  if (!offset.ok) return offset;
  const modelId = text('modelId');
  if (!modelId.ok) return modelId;
  const sampleIndex = whole('sampleIndex', MAX_INT32);
  if (!sampleIndex.ok) return sampleIndex;
  const seed = whole('seed', MAX_INT64);
  if (!seed.ok) return seed;
  const temperature = record.temperature;
  if (typeof temperature !== 'number' || !Number.isFinite(temperature) || temperature <= 0) {
    return problem('bad-field', 'temperature', `is ${describe(temperature)}; expected a number > 0`);
  }
  return {
    ok: true,
    value: {
      kind: 'synthetic',
      source: { topic: topic.value, partition: partition.value, offset: BigInt(offset.value) },
      modelId: modelId.value,
      sampleIndex: sampleIndex.value,
      seed: BigInt(seed.value),
      temperature,
    },
  };
}

/** Writing a malformed tag is a bug upstream: refuse it rather than emit provenance nobody can read back. */
function checkTag(tag: ProvenanceTag): void {
  const faults: string[] = [];
  if (tag.source.topic === '') faults.push('source topic is empty');
  if (!Number.isInteger(tag.source.partition) || tag.source.partition < 0 || tag.source.partition > Number(MAX_INT32)) {
    faults.push(`source partition ${tag.source.partition} is not a whole number from 0 to ${MAX_INT32}`);
  }
  if (tag.source.offset < 0n || tag.source.offset > MAX_INT64) faults.push(`source offset ${tag.source.offset} is outside 0…${MAX_INT64}`);
  if (tag.kind === 'synthetic') {
    if (tag.modelId === '') faults.push('model id is empty');
    if (!Number.isInteger(tag.sampleIndex) || tag.sampleIndex < 0 || tag.sampleIndex > Number(MAX_INT32)) {
      faults.push(`sample index ${tag.sampleIndex} is not a whole number from 0 to ${MAX_INT32}`);
    }
    if (tag.seed < 0n || tag.seed > MAX_UINT64) faults.push(`seed ${tag.seed} is outside 0…${MAX_UINT64}`);
    if (!(Number.isFinite(tag.temperature) && tag.temperature > 0)) faults.push(`temperature ${tag.temperature} is not a number > 0`);
  }
  if (faults.length > 0) throw new RaretideError('provenance.bad-tag', `Cannot write provenance: ${faults.join('; ')}.`);
}

function parseDecimal(text: ProvenanceResult<string>, name: string, max: bigint): ProvenanceResult<bigint> {
  if (!text.ok) return text;
  if (!DECIMAL.test(text.value) || BigInt(text.value) > max) {
    return problem('bad-header', name, `is ${JSON.stringify(text.value)}; expected a decimal whole number from 0 to ${max}`);
  }
  return { ok: true, value: BigInt(text.value) };
}

function safeLong(value: bigint, field: string): number {
  if (value < 0n || value > BigInt(Number.MAX_SAFE_INTEGER)) {
    throw new RaretideError('provenance.long-out-of-range', `Provenance ${field} ${value} is outside 0…2^53−1, which Avro file output carries exactly.`);
  }
  return Number(value);
}

const STRICT_UTF8 = new TextDecoder('utf-8', { fatal: true, ignoreBOM: true });

function utf8(bytes: Buffer): string | undefined {
  try {
    return STRICT_UTF8.decode(bytes);
  } catch {
    return undefined;
  }
}

function problem<T>(code: ProvenanceProblemCode, name: string, reason: string): ProvenanceResult<T> {
  return { ok: false, problem: { code, name, reason: `${name} ${reason}` } };
}

function describe(value: unknown): string {
  return typeof value === 'bigint' ? `${value}n` : (JSON.stringify(value) ?? String(value));
}

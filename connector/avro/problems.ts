/**
 * Decode problems as values. The decode path never throws for a bad payload: it returns a problem
 * with a stable `code`, a `reason` and, where one applies, the byte `offset`, so the dead-letter path
 * can put them in headers and the consume loop can decide retry vs dead-letter from `retriable`.
 */

export type DecodeProblemCode =
  /** The payload ends before the value does. */
  | 'truncated'
  /** The framing's leading marker bytes are wrong (single-object C3 01, registry 00). */
  | 'bad-magic'
  /** Bytes that no valid encoding produces: bad union/enum index, overlong varint, trailing bytes… */
  | 'malformed'
  /** A single-object fingerprint matching none of the configured schemas. */
  | 'unknown-fingerprint'
  /** A registry schema id the registry does not know. */
  | 'unknown-schema-id'
  /** The writer schema cannot be resolved into the reader schema. */
  | 'schema-mismatch'
  /** NaN or ±Infinity in a float/double field. */
  | 'non-finite-double'
  /** The schema registry could not be reached or answered with a server error; try again later. */
  | 'registry-unreachable'
  /** The registry answered, but not with a usable Avro schema. */
  | 'registry-invalid-response'
  /** The record has no value at the configured label path. */
  | 'missing-label';

export interface DecodeProblem {
  readonly code: DecodeProblemCode;
  /** What went wrong, naming the value and, where useful, the fix. */
  readonly reason: string;
  /** Byte offset in the payload (or file) where the problem was found. */
  readonly offset?: number;
  /** Dotted field path inside the record, for value problems. */
  readonly path?: string;
  /** Writer schema fingerprint (hex) or registry id, when known. */
  readonly schema?: string;
  /** True when the same payload may decode if tried again (the registry was down). */
  readonly retriable: boolean;
}

export type Result<T> = { readonly ok: true; readonly value: T } | { readonly ok: false; readonly problem: DecodeProblem };

export function ok<T>(value: T): Result<T> {
  return { ok: true, value };
}

const RETRIABLE: ReadonlySet<DecodeProblemCode> = new Set(['registry-unreachable']);

export function fail<T = never>(
  code: DecodeProblemCode,
  reason: string,
  details: { offset?: number; path?: string; schema?: string } = {},
): Result<T> {
  return { ok: false, problem: { code, reason, ...details, retriable: RETRIABLE.has(code) } };
}

/** One line of text for logs and dead-letter headers, e.g. `truncated at byte 12: …`. */
export function renderProblem(problem: DecodeProblem): string {
  const where = [
    problem.offset === undefined ? '' : ` at byte ${problem.offset}`,
    problem.path === undefined ? '' : ` in field ${problem.path}`,
    problem.schema === undefined ? '' : ` (writer schema ${problem.schema})`,
  ].join('');
  return `${problem.code}${where}: ${problem.reason}`;
}

/** The problem as flat string pairs, ready to become Kafka headers. */
export function problemFields(problem: DecodeProblem): Record<string, string> {
  const fields: Record<string, string> = { code: problem.code, reason: problem.reason, retriable: String(problem.retriable) };
  if (problem.offset !== undefined) fields.offset = String(problem.offset);
  if (problem.path !== undefined) fields.path = problem.path;
  if (problem.schema !== undefined) fields.schema = problem.schema;
  return fields;
}

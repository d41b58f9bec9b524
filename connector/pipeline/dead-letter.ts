/**
 * A dead letter: the untouched source payload and key, with why it could not be served in headers of
 * our own naming (`raretide.error.*`) and where it came from (`raretide.source.*`, as in provenance).
 */
import { problemFields, type DecodeProblem, type DecodeProblemCode } from '../avro/problems.js';
import { PROVENANCE_HEADERS } from './provenance.js';
import type { InputMessage, OutputHeader, OutputMessage } from './source-sink.js';

/** Reason codes of dead letters: the decode problem codes, `missing-label` among them. */
export type DeadLetterCode = DecodeProblemCode;

export const DEAD_LETTER_HEADER_PREFIX = 'raretide.error.';

/** Header names, in the order they are written (absent ones skipped). */
export const DEAD_LETTER_HEADERS = {
  code: 'raretide.error.code',
  reason: 'raretide.error.reason',
  retriable: 'raretide.error.retriable',
  offset: 'raretide.error.offset',
  path: 'raretide.error.path',
  schema: 'raretide.error.schema',
} as const;

export function deadLetter(message: InputMessage, problem: DecodeProblem): OutputMessage {
  const fields = problemFields(problem);
  const headers: OutputHeader[] = [
    { [PROVENANCE_HEADERS.sourceTopic]: message.topic },
    { [PROVENANCE_HEADERS.sourcePartition]: String(message.partition) },
    { [PROVENANCE_HEADERS.sourceOffset]: message.offset.toString() },
  ];
  for (const [field, name] of Object.entries(DEAD_LETTER_HEADERS)) {
    const value = fields[field];
    if (value !== undefined) headers.push({ [name]: value });
  }
  return {
    route: 'dead-letter',
    value: message.value,
    key: message.key,
    headers,
    timestamp: message.timestamp,
    source: { topic: message.topic, partition: message.partition, offset: message.offset },
  };
}

import { RaretideError } from '../../config/errors.js';
import type { PayloadDecoder } from '../avro/payload-decoder.js';
import { renderProblem, type DecodeProblem } from '../avro/problems.js';
import type { LabelReader } from './label.js';
import type { InputMessage } from './source-sink.js';
import type { RecordValue } from './synthesizer.js';
import { describePartition } from './topic-partition.js';

/** A source message after unframe, decode and label: a labelled record, or why it is a dead letter. */
export type DecodedEntry =
  | { readonly kind: 'record'; readonly message: InputMessage; readonly record: RecordValue; readonly label: string }
  | { readonly kind: 'rejected'; readonly message: InputMessage; readonly problem: DecodeProblem };

/**
 * Unframes, decodes and labels every message of a batch, in order. Bad payloads and missing labels
 * become rejected entries (dead letters); a problem that may pass on a retry (the schema registry is
 * down) throws a retriable error instead, before anything of the batch is counted, so the batch can be
 * read again.
 */
export async function decodeStage(messages: readonly InputMessage[], decoder: PayloadDecoder, readLabel: LabelReader): Promise<DecodedEntry[]> {
  const entries: DecodedEntry[] = [];
  for (const message of messages) {
    const pending = decoder.decode(message.value);
    const decoded = pending instanceof Promise ? await pending : pending;
    if (!decoded.ok) {
      if (decoded.problem.retriable) {
        throw new RaretideError(
          'pipeline.decode-retriable',
          `Record ${describePartition(message)}@${message.offset} could not be decoded for now (${renderProblem(decoded.problem)}); the batch is read again once the cause clears.`,
          { retriable: true },
        );
      }
      entries.push({ kind: 'rejected', message, problem: decoded.problem });
      continue;
    }
    const record = decoded.value.value as RecordValue;
    const label = readLabel(message, record);
    entries.push(label.ok ? { kind: 'record', message, record, label: label.value } : { kind: 'rejected', message, problem: label.problem });
  }
  return entries;
}

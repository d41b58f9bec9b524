import { RaretideError } from '../../config/errors.js';
import type { Framing } from '../avro/framing.js';
import { deadLetter } from './dead-letter.js';
import type { DecodedEntry } from './decode-stage.js';
import type { FramedVariant } from './guard-stage.js';
import { ProvenanceHeaderWriter } from './provenance-headers.js';
import type { OutputMessage } from './source-sink.js';
import { describePartition } from './topic-partition.js';

export interface EmitOptions {
  /** The output framing, for originals passed through. */
  readonly framing: Framing;
  readonly includeOriginals: boolean;
  /** Originals go out in the bytes they came in (see original-bytes.ts) instead of framed again. */
  readonly originalsAsRead: boolean;
  readonly modelId: string;
  readonly seed: bigint;
  readonly temperature: number;
}

/**
 * Tags and orders the batch's outputs. The order is fixed by the input alone: per source record, its
 * dead letter, or its original (when passed through) followed by its synthetic records by sample index.
 * A synthetic record keeps its source record's key and timestamp, so a keyed topic places it in the
 * same output partition as its original and the sequence is the same on every replay.
 */
export function emitStage(entries: readonly DecodedEntry[], framed: readonly (readonly FramedVariant[])[], options: EmitOptions): OutputMessage[] {
  const outputs: OutputMessage[] = [];
  const tags = new ProvenanceHeaderWriter(options);
  entries.forEach((entry, index) => {
    const { message } = entry;
    if (entry.kind === 'rejected') {
      outputs.push(deadLetter(message, entry.problem));
      return;
    }
    const source = { topic: message.topic, partition: message.partition, offset: message.offset };
    const variants = framed[index]!;
    if (!options.includeOriginals && variants.length === 0) return;
    const sourceHeaders = tags.source(source);
    if (options.includeOriginals) {
      outputs.push({
        route: 'output',
        value: options.originalsAsRead ? message.value : frameOriginal(options.framing, entry.record, message),
        key: message.key,
        headers: tags.original(sourceHeaders),
        timestamp: message.timestamp,
        source,
      });
    }
    for (const variant of variants) {
      outputs.push({
        route: 'output',
        value: variant.payload,
        key: message.key,
        headers: tags.synthetic(sourceHeaders, variant.sampleIndex),
        timestamp: message.timestamp,
        source,
      });
    }
  });
  return outputs;
}

/**
 * An original decoded fine, so an output schema that refuses it disagrees with the reader schema for
 * every record like it: a configuration error to stop on, not a bad record to dead-letter.
 */
function frameOriginal(framing: Framing, record: unknown, message: DecodedEntry['message']): Buffer {
  try {
    return framing.frame(record);
  } catch (error) {
    if (!(error instanceof RaretideError && error.code === 'avro.invalid-record')) throw error;
    throw new RaretideError(
      'pipeline.output-schema',
      `The original record ${describePartition(message)}@${message.offset} cannot be passed through: ${error.message} Make the output schema accept every record of the reader schema.`,
      { cause: error },
    );
  }
}

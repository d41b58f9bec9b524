/**
 * `regenerate` for one synthetic record: its tag (from flags, JSON, or record n of an output file) and
 * its source record (in the input file, or in the topic) give the record again, printed in Avro's JSON encoding on
 * stdout. It is compared with the output record it was read from, or with `--compare`; a difference
 * exits 1 naming the first differing field.
 */
import { RaretideError, UsageError } from '../../../config/errors.js';
import type { SyntheticTag } from '../../pipeline/provenance.js';
import type { CliContext } from '../cli-context.js';
import { openOutputRecords, type OutputRecord } from './output-records.js';
import { firstDifference, parseRecordJson, recordJson } from './record-json.js';
import type { SingleRecordSession } from './regenerate-session.js';
import { describeTag, describeVariant, syntheticOnly, tagFromFlags, tagFromJson } from './tag-input.js';

export type TagOrigin =
  | { readonly kind: 'flags'; readonly flags: readonly string[] }
  | { readonly kind: 'json'; readonly text: string }
  | { readonly kind: 'output'; readonly path: string; readonly record: number };

export interface SingleRequest {
  readonly tag: TagOrigin;
  /** A record (JSON) to compare the regenerated one with. */
  readonly compare?: string;
  readonly quiet: boolean;
}

export async function regenerateOne(session: SingleRecordSession, request: SingleRequest, context: CliContext): Promise<void> {
  const { tag, written } = await resolveTag(request.tag, session);
  const where = request.tag.kind === 'output' ? `Record ${request.tag.record} of ${request.tag.path}` : `The synthetic record ${describeVariant(tag)}`;
  session.regenerator.checkModel(tag.modelId, where);
  const message = await session.sourceRecord(tag, where);
  const result = (await session.regenerator.regenerate([{ message, tags: [tag] }]))[0]![0]!;
  if (!result.ok) throw new RaretideError('regenerate.no-variant', `${where} cannot be made again: ${result.reason}.`);
  const type = session.reader.type;
  context.stdout(`${recordJson(type, result.record)}\n`);

  if (written !== undefined) {
    const difference = written.recordBytes.equals(result.payload) ? undefined : firstDifference(type, type.fromBuffer(written.recordBytes), result.record, ['file has', 'regenerated']);
    verdict(difference, where, context, request.quiet);
  }
  if (request.compare !== undefined) {
    const given = parseRecordJson(type, request.compare, '--compare');
    verdict(firstDifference(type, given, result.record, ['given', 'regenerated']), `The record given to --compare (${describeTag(tag)})`, context, request.quiet);
  }
}

/** The tag to regenerate, and the output record it was read from (when it was). */
async function resolveTag(origin: TagOrigin, session: SingleRecordSession): Promise<{ tag: SyntheticTag; written?: OutputRecord }> {
  switch (origin.kind) {
    case 'flags':
      return { tag: tagFromFlags(origin.flags) };
    case 'json':
      return { tag: tagFromJson(origin.text) };
    case 'output':
      return outputRecord(origin.path, origin.record, session);
  }
}

function verdict(difference: string | undefined, what: string, context: CliContext, quiet: boolean): void {
  if (difference !== undefined) throw new RaretideError('regenerate.mismatch', `${what} does not match its regeneration: ${difference}.`);
  if (!quiet) context.stderr(`${what}: matches its regeneration byte for byte\n`);
}

async function outputRecord(path: string, index: number, session: SingleRecordSession): Promise<{ tag: SyntheticTag; written: OutputRecord }> {
  const output = await openOutputRecords(path, session.reader);
  try {
    let count = 0;
    for await (const block of output.blocks) {
      const record = block.find((candidate) => candidate.index === index);
      count += block.length;
      if (record !== undefined) return { tag: syntheticOnly(record.tag, `record ${index} of ${path}`), written: record };
    }
    throw new UsageError(`--record ${index}: ${path} holds ${count} records (0…${count - 1}).`);
  } finally {
    await output.close();
  }
}

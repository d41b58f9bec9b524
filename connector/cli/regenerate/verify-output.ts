/**
 * `regenerate --verify`: every synthetic record of a replay's output file made again from its tag and
 * the input file, and compared byte for byte. Output and input are streamed side by side (a replay
 * writes outputs in input order); synthetic records are regenerated in batches grouped by source
 * record, so a batch costs one model call.
 */
import { RaretideError } from '../../../config/errors.js';
import type { Clock } from '../../pipeline/rate-limit.js';
import type { InputMessage } from '../../pipeline/source-sink.js';
import type { SyntheticTag } from '../../pipeline/provenance.js';
import { provenanceFieldBytes } from '../../files/provenance-field.js';
import type { FileProvenance } from '../../files/container-sink.js';
import { duration } from '../replay/progress-line.js';
import { openOutputRecords, type OutputRecord } from './output-records.js';
import { firstDifference } from './record-json.js';
import type { RegenerateSession } from './regenerate-session.js';
import { describeTag } from './tag-input.js';

/** Synthetic records regenerated per model call: enough rows to keep the network's passes efficient. */
const VERIFY_BATCH = 2048;
/** Mismatches listed in the summary. */
const LISTED_MISMATCHES = 5;

export interface Mismatch {
  /** Index of the record in the output file, from 0. */
  readonly record: number;
  /** Its provenance, as text; undefined when unreadable. */
  readonly provenance: string | undefined;
  readonly reason: string;
}

export interface VerifySummary {
  readonly output: string;
  readonly input: string;
  readonly modelId: string;
  readonly provenance: FileProvenance;
  /** Records in the output file. */
  readonly records: number;
  /** Originals passed through (not regenerated: they carry no sample to make). */
  readonly originals: number;
  readonly checked: number;
  readonly matched: number;
  readonly mismatched: number;
  /** The first few, in file order. */
  readonly mismatches: readonly Mismatch[];
  readonly elapsedMs: number;
}

interface Pending {
  readonly record: OutputRecord;
  readonly tag: SyntheticTag;
}

export interface VerifyOptions {
  readonly clock: Clock;
  /** Receives a progress line about once a second. */
  readonly progress?: (line: string) => void;
  /** Synthetic records regenerated per model call. @default 2048 */
  readonly batchSize?: number;
}

export async function verifyOutput(session: RegenerateSession, paths: { output: string; input: string }, options: VerifyOptions): Promise<VerifySummary> {
  const { regenerator, cursor } = session;
  const started = options.clock.now();
  const batchSize = options.batchSize ?? VERIFY_BATCH;
  const output = await openOutputRecords(paths.output, session.reader);
  let records = 0;
  let originals = 0;
  let checked = 0;
  let mismatched = 0;
  const mismatches: Mismatch[] = [];
  const miss = (record: number, tag: SyntheticTag | undefined, reason: string) => {
    mismatched++;
    if (mismatches.length < LISTED_MISMATCHES) mismatches.push({ record, provenance: tag === undefined ? undefined : describeTag(tag), reason });
  };
  let lastProgress = started;

  const check = async (pending: readonly Pending[]) => {
    const jobs: { message: InputMessage; tags: SyntheticTag[] }[] = [];
    const members: Pending[][] = [];
    for (const item of pending) {
      const message = await cursor.take(item.tag.source.offset);
      if (message === undefined) {
        checked++;
        miss(item.record.index, item.tag, `${paths.input} has no record at offset ${item.tag.source.offset}`);
        continue;
      }
      if (jobs.at(-1)?.message === message) {
        members.at(-1)!.push(item);
        jobs.at(-1)!.tags.push(item.tag);
      } else {
        jobs.push({ message, tags: [item.tag] });
        members.push([item]);
      }
    }
    const results = await regenerator.regenerate(jobs);
    results.forEach((perTag, job) =>
      perTag.forEach((result, t) => {
        const { record, tag } = members[job]![t]!;
        checked++;
        const reason = result.ok ? difference(record, tag, result.payload, session) : result.reason;
        if (reason !== undefined) miss(record.index, tag, reason);
      }),
    );
  };

  try {
    if (output.modelId !== undefined) regenerator.checkModel(output.modelId, `${paths.output} (its raretide.model header entry)`);
    let pending: Pending[] = [];
    for await (const block of output.blocks) {
      for (const record of block) {
        records++;
        if (!record.tag.ok) {
          checked++;
          miss(record.index, undefined, `its provenance is unreadable: ${record.tag.problem.reason}`);
          continue;
        }
        const tag = record.tag.value;
        if (tag === null) {
          originals++;
          continue;
        }
        const where = `record ${record.index} of ${paths.output}`;
        regenerator.checkModel(tag.modelId, where);
        session.checkSource(tag, where);
        pending.push({ record, tag });
        if (pending.length >= batchSize) {
          await check(pending);
          pending = [];
        }
      }
      const now = options.clock.now();
      if (options.progress !== undefined && now - lastProgress >= 1000) {
        lastProgress = now;
        options.progress(`verify: ${records.toLocaleString('en-US')} records read, ${checked.toLocaleString('en-US')} synthetic checked, ${mismatched} mismatched\n`);
      }
    }
    await check(pending);
  } finally {
    await output.close();
  }
  return {
    output: paths.output,
    input: paths.input,
    modelId: regenerator.modelId,
    provenance: output.mode,
    records,
    originals,
    checked,
    matched: checked - mismatched,
    mismatched,
    mismatches,
    elapsedMs: options.clock.now() - started,
  };
}

/** Why the record's bytes are not the regenerated ones; undefined when they are. */
function difference(record: OutputRecord, tag: SyntheticTag, payload: Buffer, session: RegenerateSession): string | undefined {
  if (record.provenanceBytes !== undefined && !record.provenanceBytes.equals(provenanceFieldBytes(tag))) {
    return 'its provenance field is not encoded as a replay writes it';
  }
  if (record.recordBytes.equals(payload)) return undefined;
  const type = session.reader.type;
  let written: unknown;
  try {
    written = type.fromBuffer(record.recordBytes);
  } catch (cause) {
    return `its bytes differ from the regenerated record's and do not decode (${(cause as Error).message})`;
  }
  return `it differs from its regeneration: ${firstDifference(type, written, type.fromBuffer(payload), ['file has', 'regenerated'])}`;
}

export function renderVerifySummary(summary: VerifySummary): string {
  const lines = [
    `verified ${summary.output} against ${summary.input} with model ${summary.modelId} (provenance in ${summary.provenance === 'field' ? 'the record field' : 'the sidecar'}) in ${duration(summary.elapsedMs)}`,
    `records: ${summary.records} (${summary.originals} originals, not regenerated); synthetic checked ${summary.checked}, matched ${summary.matched}, mismatched ${summary.mismatched}`,
  ];
  for (const mismatch of summary.mismatches) {
    lines.push(`  record ${mismatch.record}${mismatch.provenance === undefined ? '' : ` (${mismatch.provenance})`}: ${mismatch.reason}`);
  }
  if (summary.mismatched > summary.mismatches.length) lines.push(`  … and ${summary.mismatched - summary.mismatches.length} more`);
  return `${lines.join('\n')}\n`;
}

/** Exit 1 naming the first mismatching record, when there is one. */
export function failOnMismatch(summary: VerifySummary): void {
  const first = summary.mismatches[0];
  if (first === undefined) return;
  throw new RaretideError(
    'regenerate.mismatch',
    `${summary.mismatched} of ${summary.checked} synthetic records of ${summary.output} do not match their regeneration; the first is record ${first.record}` +
      `${first.provenance === undefined ? '' : ` (${first.provenance})`}: ${first.reason}.`,
  );
}

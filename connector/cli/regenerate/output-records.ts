/**
 * The records of a replay's output file with their provenance, streamed a block at a time. In field
 * mode the tag is the appended `raretide_provenance` field: Avro encodes a record as its fields one
 * after another (Avro specification, "Binary Encoding", records), so the bounded scan of the record
 * schema finds where the record's own bytes end and the field's begin, without decoding originals. In
 * sidecar mode the tag is line i of `<output>.provenance.jsonl`.
 */
import { createReadStream } from 'node:fs';
import { access } from 'node:fs/promises';
import { createInterface } from 'node:readline';
import type { Type } from 'avsc';
import { RaretideError, UsageError } from '../../../config/errors.js';
import { ContainerFileReader } from '../../avro/container/container-reader.js';
import { scanValue } from '../../avro/bounded-scan.js';
import { knownSchema, parseAvroType, type KnownSchema } from '../../avro/known-schema.js';
import type { FileProvenance } from '../../files/container-sink.js';
import { PROVENANCE_FIELD, PROVENANCE_FIELD_NAME, fromHeaders, fromProvenanceRecord, type ProvenanceResult, type SyntheticTag } from '../../pipeline/provenance.js';

export interface OutputRecord {
  /** Position in the output file, from 0. */
  readonly index: number;
  /** The record's bytes in the record (reader) schema, without any provenance field. */
  readonly recordBytes: Buffer;
  /** Field mode: the provenance field's bytes as written. */
  readonly provenanceBytes: Buffer | undefined;
  /** null for an original; a problem when the tag cannot be read. */
  readonly tag: ProvenanceResult<SyntheticTag | null>;
}

export interface OpenedOutputRecords {
  readonly mode: FileProvenance;
  /** The `raretide.model` header entry a replay writes, when present. */
  readonly modelId: string | undefined;
  /** Records in file order, one array per container block. */
  readonly blocks: AsyncGenerator<OutputRecord[]>;
  close(): Promise<void>;
}

const PROVENANCE_UNION = parseAvroType(PROVENANCE_FIELD.type);

/**
 * Opens `path`; its records must be in `reader` (the schema the replay wrote them in). The mode is read
 * from the file: the provenance field when its schema has one, else the sidecar beside it.
 */
export async function openOutputRecords(path: string, reader: KnownSchema): Promise<OpenedOutputRecords> {
  const file = await ContainerFileReader.open(path);
  try {
    const modelId = file.header.metadata.get('raretide.model')?.toString('utf8');
    const recordPart = recordPartOf(file.header.writer, path);
    if (recordPart.fingerprint.hex !== reader.fingerprint.hex) {
      throw new UsageError(
        `${path} holds records of schema ${recordPart.fingerprint.hex}, but this model reads records as ${reader.fingerprint.hex} (${reader.source}); ` +
          'verify with the config and model the replay used.',
        { code: 'regenerate.schema-mismatch' },
      );
    }
    if (recordPart !== file.header.writer) return { mode: 'field', modelId, blocks: fieldBlocks(file, recordPart.type), close: async () => file.close() };
    const sidecar = `${path}.provenance.jsonl`;
    try {
      await access(sidecar);
    } catch (cause) {
      throw new UsageError(`${path} has no ${PROVENANCE_FIELD_NAME} field and its provenance sidecar ${sidecar} cannot be read (${(cause as Error).message}); keep the sidecar beside the output.`, { cause });
    }
    const lines = createInterface({ input: createReadStream(sidecar, 'utf8'), crlfDelay: Infinity });
    return {
      mode: 'sidecar',
      modelId,
      blocks: sidecarBlocks(file, lines[Symbol.asyncIterator](), sidecar),
      close: async () => {
        file.close();
        lines.close();
      },
    };
  } catch (error) {
    file.close();
    throw error;
  }
}

/** The schema without the provenance field when it ends with one; else the schema itself. */
function recordPartOf(writer: KnownSchema, path: string): KnownSchema {
  const json = writer.json as { type?: unknown; fields?: readonly { name?: unknown }[] };
  const fields = Array.isArray(json.fields) ? json.fields : [];
  if (json.type !== 'record' || fields.at(-1)?.name !== PROVENANCE_FIELD_NAME) return writer;
  return knownSchema({ ...json, fields: fields.slice(0, -1) }, `${path} without ${PROVENANCE_FIELD_NAME}`);
}

async function* fieldBlocks(file: ContainerFileReader, recordType: Type): AsyncGenerator<OutputRecord[]> {
  let index = 0;
  for await (const bodies of file.encodedBlocks()) {
    yield bodies.map((body) => {
      // The container reader scanned the whole body with the file schema, so this scan succeeds.
      const scanned = scanValue(recordType, body, 0);
      const end = scanned.ok ? scanned.value : body.length;
      const provenanceBytes = body.subarray(end);
      return { index: index++, recordBytes: body.subarray(0, end), provenanceBytes, tag: fieldTag(provenanceBytes) };
    });
  }
}

function fieldTag(bytes: Buffer): ProvenanceResult<SyntheticTag | null> {
  if (bytes.length === 1 && bytes[0] === 0) return { ok: true, value: null };
  let value: unknown;
  try {
    value = PROVENANCE_UNION.fromBuffer(bytes);
  } catch (cause) {
    return { ok: false, problem: { code: 'bad-field', name: PROVENANCE_FIELD_NAME, reason: `${PROVENANCE_FIELD_NAME} does not decode (${(cause as Error).message})` } };
  }
  return fromProvenanceRecord(value);
}

async function* sidecarBlocks(file: ContainerFileReader, lines: AsyncIterator<string>, sidecar: string): AsyncGenerator<OutputRecord[]> {
  let index = 0;
  for await (const bodies of file.encodedBlocks()) {
    const records: OutputRecord[] = [];
    for (const body of bodies) {
      const line = await lines.next();
      if (line.done === true) throw new RaretideError('regenerate.sidecar-short', `${sidecar} ends at line ${index}, but the output has more records; the sidecar belongs to another output.`);
      records.push({ index, recordBytes: body, provenanceBytes: undefined, tag: sidecarTag(line.value, index) });
      index++;
    }
    yield records;
  }
  if ((await lines.next()).done !== true) throw new RaretideError('regenerate.sidecar-long', `${sidecar} has more lines than the output's ${index} records; the sidecar belongs to another output.`);
}

function sidecarTag(text: string, index: number): ProvenanceResult<SyntheticTag | null> {
  const bad = (reason: string): ProvenanceResult<SyntheticTag | null> => ({ ok: false, problem: { code: 'bad-field', name: 'provenance', reason } });
  let line: { record?: unknown; provenance?: unknown };
  try {
    line = JSON.parse(text) as typeof line;
  } catch {
    return bad(`sidecar line ${index} is not JSON`);
  }
  if (line.record !== index) return bad(`sidecar line ${index} is for record ${JSON.stringify(line.record)}`);
  if (line.provenance === null || typeof line.provenance !== 'object') return bad(`sidecar line ${index} has no provenance object`);
  const tag = fromHeaders([line.provenance as Record<string, string>]);
  if (!tag.ok) return tag;
  return { ok: true, value: tag.value.kind === 'original' ? null : tag.value };
}

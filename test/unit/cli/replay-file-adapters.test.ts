import { mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ContainerFileReader } from '../../../connector/avro/container/container-reader.js';
import { ContainerFileWriter } from '../../../connector/avro/container/container-writer.js';
import { progressText } from '../../../connector/cli/replay/progress-line.js';
import { ContainerFileSink } from '../../../connector/files/container-sink.js';
import { ContainerFileSource } from '../../../connector/files/container-source.js';
import { provenanceFieldBytes, withProvenanceField } from '../../../connector/files/provenance-field.js';
import { syncMarkerFor } from '../../../connector/files/sync-marker.js';
import { PROVENANCE_FIELD_NAME, toHeaders, toProvenanceRecord, type ProvenanceTag } from '../../../connector/pipeline/provenance.js';
import type { OutputMessage } from '../../../connector/pipeline/source-sink.js';
import { sorterEvents, sorterSchema, type SorterEvent } from '../pipeline/support/sorter-events.js';

let directory = '';
let events: SorterEvent[] = [];
let inputFile = '';
beforeAll(async () => {
  directory = await mkdtemp(join(tmpdir(), 'raretide-replay-files-'));
  events = sorterEvents(700, { jam: 0.05 }, 9);
  inputFile = join(directory, 'events.avro');
  const writer = await ContainerFileWriter.create(inputFile, { schema: sorterSchema, blockSizeBytes: 2048 });
  for (const event of events) await writer.append(event);
  await writer.close();
});
afterAll(async () => rm(directory, { recursive: true, force: true }));

const SYNTHETIC: ProvenanceTag = {
  kind: 'synthetic',
  source: { topic: 'events.avro', partition: 0, offset: 12n },
  modelId: '9c1e5f0a7b3d2e64',
  sampleIndex: 2,
  seed: 7n,
  temperature: 0.8,
};

function outputOf(event: SorterEvent, tag: ProvenanceTag): OutputMessage {
  return { route: 'output', value: sorterSchema.type.toBuffer(event), key: null, headers: toHeaders(tag), timestamp: undefined, source: tag.source };
}

describe('provenance field bytes', () => {
  it('are what avsc writes for the extended schema: record bytes, then the field (differential check)', () => {
    // Avro specification, "Binary Encoding": a record is its fields' encodings in schema order.
    const extended = withProvenanceField(sorterSchema);
    const original: ProvenanceTag = { kind: 'original', source: SYNTHETIC.source };
    for (const tag of [original, SYNTHETIC]) {
      const appended = Buffer.concat([sorterSchema.type.toBuffer(events[0]), provenanceFieldBytes(tag)]);
      const reference = extended.type.toBuffer({ ...events[0], [PROVENANCE_FIELD_NAME]: toProvenanceRecord(tag) });
      expect(appended.equals(reference)).toBe(true);
    }
  });

  it('refuse a schema that already has the field', () => {
    const clash = { ...sorterSchema, json: { ...(sorterSchema.json as object), fields: [{ name: PROVENANCE_FIELD_NAME, type: 'string' }] } };
    expect(() => withProvenanceField(clash)).toThrow(/already has a field raretide_provenance.*sidecar/);
  });
});

describe('ContainerFileSource', () => {
  it('hands out the encoded records as one partition of the file, offsets counting from 0, after assigning it', async () => {
    const source = await ContainerFileSource.open(inputFile);
    const assigned: unknown[] = [];
    source.onAssignment({ assigned: async (partitions) => void assigned.push(...partitions), revoked: async () => undefined });
    const batches = [];
    for (let batch = await source.nextBatch(300); batch !== null; batch = await source.nextBatch(300)) batches.push(batch);
    expect(assigned).toEqual([{ topic: 'events.avro', partition: 0 }]);
    expect(batches.map((batch) => batch.length)).toEqual([300, 300, 100]);
    const all = batches.flat();
    expect(all.map((message) => message.offset)).toEqual(events.map((_, index) => BigInt(index)));
    expect(all.map((message) => sorterSchema.type.fromBuffer(message.value))).toEqual(events.map((event) => expect.objectContaining(event)));
    expect(source.bytesRead).toBe(source.totalBytes);
    await source.close();
  });

  it('returns empty batches while paused', async () => {
    const source = await ContainerFileSource.open(inputFile);
    source.pause();
    expect(await source.nextBatch(10)).toEqual([]);
    source.resume();
    expect(await source.nextBatch(10)).toHaveLength(10);
    await source.close();
  });
});

describe('ContainerFileSink', () => {
  it('writes records with their provenance, dead letters beside them, under the seed-derived sync marker', async () => {
    const out = join(directory, 'sink.avro');
    const sink = await ContainerFileSink.create(out, { recordSchema: sorterSchema, provenance: 'field', syncMarker: syncMarkerFor(7) });
    const deadLetter: OutputMessage = {
      route: 'dead-letter',
      value: Buffer.from([1, 2, 3]),
      key: Buffer.from('P9'),
      headers: [{ 'raretide.error.code': 'truncated' }, { 'raretide.error.reason': 'payload ends early' }],
      timestamp: undefined,
      source: { topic: 'events.avro', partition: 0, offset: 13n },
    };
    await sink.send([outputOf(events[12]!, { kind: 'original', source: SYNTHETIC.source }), outputOf(events[12]!, SYNTHETIC), deadLetter]);
    expect(await readdir(directory)).not.toContain('sink.avro');
    await sink.close();
    const reader = await ContainerFileReader.open(out);
    expect(reader.header.syncMarker.equals(syncMarkerFor(7))).toBe(true);
    const records: Record<string, unknown>[] = [];
    for await (const record of reader) records.push(record as Record<string, unknown>);
    expect(records.map((record) => record[PROVENANCE_FIELD_NAME])).toEqual([null, expect.objectContaining(toProvenanceRecord(SYNTHETIC))]);
    const [line] = (await readFile(`${out}.dead-letter.jsonl`, 'utf8')).trimEnd().split('\n').map((text) => JSON.parse(text));
    expect(line).toMatchObject({ offset: '13', code: 'truncated', reason: 'payload ends early', key: Buffer.from('P9').toString('base64'), payload: 'AQID' });
  });

  it('leaves nothing behind when aborted', async () => {
    const out = join(directory, 'aborted.avro');
    const sink = await ContainerFileSink.create(out, { recordSchema: sorterSchema, provenance: 'sidecar', syncMarker: syncMarkerFor(7) });
    await sink.send([outputOf(events[0]!, SYNTHETIC)]);
    await sink.abort();
    expect((await readdir(directory)).filter((name) => name.includes('aborted'))).toEqual([]);
  });
});

describe('progress line', () => {
  it('reports records, synthetic records, the rate and an ETA from the share read', () => {
    // 10,000 records in 2 s with 25 % of the input read: 5,000 records/s, 6 s to go.
    expect(progressText(10_000, 420, 2000, 0.25)).toBe('replay: 10,000 records (25 %), 420 synthetic, 5,000 records/s, ETA 6.0 s');
    expect(progressText(0, 0, 0, 0)).toContain('ETA ?');
  });
});

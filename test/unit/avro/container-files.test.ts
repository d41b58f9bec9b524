import { once } from 'node:events';
import { createWriteStream } from 'node:fs';
import { mkdir, mkdtemp, open, readdir, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import avro from 'avsc';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import { ContainerFileReader, readContainerRecords } from '../../../connector/avro/container/container-reader.js';
import { ContainerFileWriter, type ContainerWriteOptions } from '../../../connector/avro/container/container-writer.js';
import { READING_V1, readingReader, readingV1, sampleReading } from './support/schemas.js';

// File layout: Avro specification, "Object Container Files".
let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'raretide-avro-'));
});
afterAll(async () => rm(dir, { recursive: true, force: true }));

const SYNC = Buffer.from('00112233445566778899aabbccddeeff', 'hex');

async function writeFileOf(name: string, count: number, options: Partial<ContainerWriteOptions> = {}): Promise<string> {
  const path = join(dir, name);
  const writer = await ContainerFileWriter.create(path, { schema: readingV1, ...options });
  for (let i = 0; i < count; i++) await writer.append(sampleReading(i));
  await writer.close();
  return path;
}

async function collect(source: AsyncIterable<unknown>): Promise<unknown[]> {
  const records: unknown[] = [];
  for await (const record of source) records.push({ ...(record as object) });
  return records;
}

const expected = (count: number) => Array.from({ length: count }, (_, i) => sampleReading(i));

async function corruptionOf(path: string): Promise<RaretideError> {
  try {
    await collect(readContainerRecords(path));
  } catch (error) {
    if (error instanceof RaretideError) return error;
    throw error;
  }
  throw new Error(`${path} read without error`);
}

describe.each(['null', 'deflate'] as const)('container files, %s codec', (codec) => {
  it('round-trips records across many blocks, with header metadata', async () => {
    const path = await writeFileOf(`many-${codec}.avro`, 500, { codec, blockSizeBytes: 1024, metadata: { 'raretide.note': 'tide test' } });
    const reader = await ContainerFileReader.open(path);
    expect(reader.header.codec).toBe(codec);
    expect(reader.header.metadata.get('raretide.note')?.toString()).toBe('tide test');
    expect(reader.header.writer.fingerprint.hex).toBe(readingV1.fingerprint.hex);
    expect(await collect(reader)).toEqual(expected(500));
  });

  it('writes byte-identical files for the same records and sync marker', async () => {
    const a = await writeFileOf(`same-a-${codec}.avro`, 300, { codec, syncMarker: SYNC, blockSizeBytes: 2048 });
    const b = await writeFileOf(`same-b-${codec}.avro`, 300, { codec, syncMarker: SYNC, blockSizeBytes: 2048 });
    const bytes = await readFile(a);
    expect(bytes.equals(await readFile(b))).toBe(true);
    expect(bytes.subarray(bytes.length - 16).equals(SYNC)).toBe(true);
  });

  it('is read by avsc, and reads what avsc writes', async () => {
    const ours = await writeFileOf(`ours-${codec}.avro`, 200, { codec, blockSizeBytes: 512 });
    const decoded: unknown[] = [];
    const avscDecoder = avro.createFileDecoder(ours).on('data', (record: object) => decoded.push({ ...record }));
    await once(avscDecoder, 'end');
    expect(decoded).toEqual(expected(200));

    const theirs = join(dir, `theirs-${codec}.avro`);
    await writeWithAvsc(theirs, READING_V1, expected(200), { codec, blockSize: 512 });
    expect(await collect(readContainerRecords(theirs))).toEqual(expected(200));
  });
});

describe('container file reading', () => {
  it('streams a file many blocks long without pulling all of it in', async () => {
    const path = await writeFileOf('long.avro', 20_000, { blockSizeBytes: 4096 });
    const size = (await stat(path)).size;
    let pulled = 0;
    async function* chunks(): AsyncGenerator<Buffer> {
      const handle = await open(path);
      try {
        for (;;) {
          const { bytesRead, buffer } = await handle.read(Buffer.alloc(4096), 0, 4096, null);
          if (bytesRead === 0) return;
          pulled += bytesRead;
          yield buffer.subarray(0, bytesRead);
        }
      } finally {
        await handle.close();
      }
    }
    const reader = await ContainerFileReader.open(Readable.from(chunks()), { name: 'long.avro' });
    let count = 0;
    let inOrder = 0;
    let pulledAtFirst = 0;
    for await (const record of reader) {
      if (count === 0) pulledAtFirst = pulled;
      if ((record as { count: number }).count === count) inOrder += 1;
      count += 1;
    }
    expect(inOrder).toBe(20_000);
    expect(size).toBeGreaterThan(500_000);
    expect(pulledAtFirst).toBeLessThanOrEqual(3 * 4096);
    expect(count).toBe(20_000);
    expect(pulled).toBe(size);
  });

  it('reads into a reader schema (resolution)', async () => {
    const path = await writeFileOf('resolved.avro', 10);
    const records = await collect(readContainerRecords(path, { reader: readingReader }));
    expect(records).toEqual(expected(10).map((record) => ({ ...record, region: 'unknown' })));
  });

  it('names the file and byte offset of a truncation', async () => {
    const path = await writeFileOf('whole.avro', 100, { blockSizeBytes: 1024, syncMarker: SYNC });
    const bytes = await readFile(path);
    const firstSync = bytes.indexOf(SYNC);
    const cuts = [2, firstSync + 5, Math.floor(bytes.length / 2), bytes.length - 3];
    for (const cut of cuts) {
      const cutPath = join(dir, `cut-${cut}.avro`);
      await writeFile(cutPath, bytes.subarray(0, cut));
      const error = await corruptionOf(cutPath);
      expect(error.code).toBe('avro.container-corrupt');
      expect(error.message).toContain(cutPath);
      expect(error.message).toMatch(new RegExp(`file ends inside .* at byte ${cut}\\.`));
    }
  });

  it('reports a damaged sync marker, bad magic and an unsupported codec', async () => {
    const path = await writeFileOf('damaged.avro', 50, { blockSizeBytes: 1024, syncMarker: SYNC });
    const bytes = Buffer.from(await readFile(path));
    const secondSync = bytes.indexOf(SYNC, bytes.indexOf(SYNC) + 16);
    bytes.writeUInt8(bytes.readUInt8(secondSync + 7) ^ 0xff, secondSync + 7);
    await writeFile(path, bytes);
    expect((await corruptionOf(path)).message).toMatch(new RegExp(`sync marker differs .* at byte ${secondSync}\\.`));

    const notAvro = join(dir, 'not-avro.avro');
    await writeFile(notAvro, 'PAR1 is some other format');
    expect((await corruptionOf(notAvro)).message).toMatch(/not an Avro container file at byte 0/);

    const snappy = join(dir, 'snappy.avro');
    await writeWithAvsc(snappy, 'int', [1], { codec: 'snappy', codecs: { snappy: (data, callback) => callback(null, data) } });
    await expect(ContainerFileReader.open(snappy)).rejects.toThrow(/codec "snappy"/);
  });
});

describe('container file writing', () => {
  it('leaves nothing at the target path until close, and no temporary file after', async () => {
    const path = join(dir, 'atomic', 'out.avro');
    await mkdir(join(dir, 'atomic'));
    const writer = await ContainerFileWriter.create(path, { schema: readingV1, blockSizeBytes: 256 });
    for (let i = 0; i < 50; i++) await writer.append(sampleReading(i));
    expect(await readdir(join(dir, 'atomic'))).not.toContain('out.avro');
    await writer.close();
    expect(await readdir(join(dir, 'atomic'))).toEqual(['out.avro']);

    const aborted = await ContainerFileWriter.create(join(dir, 'atomic', 'aborted.avro'), { schema: readingV1 });
    await aborted.append(sampleReading(1));
    await aborted.abort();
    expect(await readdir(join(dir, 'atomic'))).toEqual(['out.avro']);
  });

  it('checks its options and its records', async () => {
    const path = join(dir, 'bad.avro');
    await expect(ContainerFileWriter.create(path, { schema: readingV1, syncMarker: Buffer.alloc(8) })).rejects.toThrow(/`syncMarker` to be 16 bytes, got 8/);
    await expect(ContainerFileWriter.create(path, { schema: readingV1, metadata: { 'avro.x': 'y' } })).rejects.toThrow(/avro\.x/);
    const writer = await ContainerFileWriter.create(path, { schema: readingV1 });
    await expect(writer.append({ ...sampleReading(0), level: 'high' })).rejects.toThrow(/level = "high"/);
    await writer.abort();
  });
});

/** Writes a container file with avsc's own block encoder, resolving once the file is closed. */
async function writeWithAvsc(
  path: string,
  schema: unknown,
  records: readonly unknown[],
  options: ConstructorParameters<typeof avro.streams.BlockEncoder>[1],
): Promise<void> {
  const encoder = new avro.streams.BlockEncoder(schema as never, options);
  const file = createWriteStream(path);
  encoder.pipe(file);
  for (const record of records) encoder.write(record);
  encoder.end();
  await once(file, 'close');
}

import { open } from 'node:fs/promises';
import type { Readable } from 'node:stream';
import avro from 'avsc';
import { RaretideError, UsageError } from '../../../config/errors.js';
import { minimumBytes, scanValue, type ScanLimits } from '../bounded-scan.js';
import { knownSchema, type KnownSchema } from '../known-schema.js';
import { renderProblem } from '../problems.js';
import { ReaderResolution, type AvroResolver } from '../resolution.js';
import { decompressBlock } from './block-codec.js';
import { CONTAINER_MAGIC, SYNC_MARKER_BYTES, corruptContainer, isContainerCodec, type ContainerCodec } from './container-format.js';
import { StreamCursor } from './stream-cursor.js';

export interface ContainerReadOptions {
  /** The schema records are read as (writer → reader resolution); without one, the file's own schema. */
  readonly reader?: KnownSchema;
  /** Largest block accepted, compressed or inflated; bigger means corrupt (and would not fit memory). @default 67108864 */
  readonly maxBlockBytes?: number;
  /** Name used in messages when the source is a stream. @default 'stream' */
  readonly name?: string;
  readonly limits?: ScanLimits;
}

export interface ContainerHeader {
  readonly writer: KnownSchema;
  readonly codec: ContainerCodec;
  /** Every metadata entry, `avro.schema` and `avro.codec` included. */
  readonly metadata: ReadonlyMap<string, Buffer>;
  readonly syncMarker: Buffer;
}

const LONG = avro.Type.forSchema('long');
const READ_CHUNK_BYTES = 64 * 1024;
const MAX_METADATA_VALUE_BYTES = 16 * 1024 * 1024;

/**
 * Streams the records of an Avro object container file: one block in memory at a time, every
 * count, size and sync marker checked, so a corrupt or truncated file fails with its name and the
 * byte offset instead of hanging or returning garbage.
 */
export class ContainerFileReader implements AsyncIterable<unknown> {
  private constructor(
    readonly header: ContainerHeader,
    private readonly file: string,
    private readonly cursor: StreamCursor,
    private readonly stream: Readable,
    private readonly options: ContainerReadOptions,
  ) {}

  /** Opens `source` (a path or a byte stream) and reads the header. */
  static async open(source: string | Readable, options: ContainerReadOptions = {}): Promise<ContainerFileReader> {
    const file = typeof source === 'string' ? source : (options.name ?? 'stream');
    let stream: Readable;
    if (typeof source === 'string') {
      try {
        stream = (await open(source, 'r')).createReadStream({ highWaterMark: READ_CHUNK_BYTES });
      } catch (cause) {
        throw new UsageError(`Cannot open Avro container file ${source} (${(cause as Error).message}); check the input path.`, { cause });
      }
    } else {
      stream = source;
    }
    const cursor = new StreamCursor(stream[Symbol.asyncIterator]());
    try {
      const header = await readHeader(cursor, file);
      return new ContainerFileReader(header, file, cursor, stream, options);
    } catch (error) {
      stream.destroy();
      throw error;
    }
  }

  [Symbol.asyncIterator](): AsyncGenerator<unknown> {
    return this.records();
  }

  /**
   * The records as their encoded bytes in the writer schema, one array per block, each record checked
   * by the bounded scan but not decoded: for a consumer that decodes (and resolves) them itself, such
   * as the pipeline core. A block at a time keeps the per-record cost of async iteration away.
   */
  encodedBlocks(): AsyncGenerator<Buffer[]> {
    return this.bodies();
  }

  /** Bytes of the file read so far (header and whole blocks), for progress against the file size. */
  get bytesRead(): number {
    return this.cursor.offset;
  }

  /** Stops reading early and releases the file. */
  close(): void {
    this.stream.destroy();
  }

  private async *records(): AsyncGenerator<unknown> {
    const { readerType, resolver } = this.readerFor(this.header.writer);
    for await (const { block, count, dataAt } of this.blocks()) yield* this.blockRecords(block, count, dataAt, readerType, resolver);
  }

  private async *bodies(): AsyncGenerator<Buffer[]> {
    for await (const { block, count, dataAt } of this.blocks()) yield [...this.blockBodies(block, count, dataAt)];
  }

  /** Every block, checked and inflated; the file is released when the loop ends, however it ends. */
  private async *blocks(): AsyncGenerator<{ block: Buffer; count: number; dataAt: number }> {
    const { writer, codec, syncMarker } = this.header;
    const maxBlockBytes = this.options.maxBlockBytes ?? 64 * 1024 * 1024;
    const recordMinBytes = minimumBytes(writer.type);
    const maxRecords = this.options.limits?.maxZeroByteItems ?? 65_536;
    const cursor = this.cursor;
    try {
      while (!(await cursor.atEnd())) {
        const count = await readLong(cursor, this.file, 'block record count');
        const countAt = cursor.offset;
        const size = await readLong(cursor, this.file, 'block byte size');
        if (count < 0 || size < 0 || size > maxBlockBytes) {
          throw corruptContainer(this.file, countAt, `block header (${count} records, ${size} bytes) is impossible (limit ${maxBlockBytes} bytes)`);
        }
        const dataAt = cursor.offset;
        const data = await takeExactly(cursor, this.file, size, `a block of ${size} bytes that starts at byte ${dataAt}`);
        const syncAt = cursor.offset;
        const sync = await takeExactly(cursor, this.file, SYNC_MARKER_BYTES, 'a block sync marker');
        if (!sync.equals(syncMarker)) throw corruptContainer(this.file, syncAt, 'block sync marker differs from the header sync marker');
        let block: Buffer;
        try {
          block = await decompressBlock(codec, data, maxBlockBytes);
        } catch (cause) {
          throw corruptContainer(this.file, dataAt, `${codec} block does not decompress (${(cause as Error).message})`);
        }
        if (recordMinBytes > 0 ? count > block.length / recordMinBytes : count > maxRecords) {
          throw corruptContainer(this.file, dataAt, `block claims ${count} records but holds only ${block.length} bytes`);
        }
        yield { block, count, dataAt };
      }
    } finally {
      this.close();
    }
  }

  private *blockBodies(block: Buffer, count: number, dataAt: number): Generator<Buffer> {
    let position = 0;
    for (let index = 0; index < count; index++) {
      const scanned = this.scanRecord(block, position, index, dataAt);
      yield block.subarray(position, scanned);
      position = scanned;
    }
    this.checkBlockEnd(block, position, count, dataAt);
  }

  /** End of the record at `position` by the bounded scan; a corrupt record fails naming the file offset. */
  private scanRecord(block: Buffer, position: number, index: number, dataAt: number): number {
    const scanned = scanValue(this.header.writer.type, block, position, this.options.limits);
    if (scanned.ok) return scanned.value;
    const offset = scanned.problem.offset ?? position;
    throw corruptContainer(this.file, this.fileOffset(dataAt, offset), `${renderProblem(scanned.problem)}${this.inBlock(index, offset)}`);
  }

  private checkBlockEnd(block: Buffer, position: number, count: number, dataAt: number): void {
    if (position !== block.length) {
      throw corruptContainer(this.file, this.fileOffset(dataAt, position), `${block.length - position} bytes follow the block's ${count} records`);
    }
  }

  /** A byte offset in the file; inside an inflated block only the block's start is known. */
  private fileOffset(dataAt: number, offset: number): number {
    return this.header.codec !== 'null' ? dataAt : dataAt + offset;
  }

  private inBlock(index: number, offset: number): string {
    return this.header.codec !== 'null' ? ` (record ${index} of the block, byte ${offset} after inflating)` : ` (record ${index} of the block)`;
  }

  private *blockRecords(block: Buffer, count: number, dataAt: number, readerType: avro.Type, resolver: AvroResolver | undefined): Generator<unknown> {
    let position = 0;
    for (let index = 0; index < count; index++) {
      const scanned = this.scanRecord(block, position, index, dataAt);
      let value: unknown;
      try {
        value = readerType.decode(block, position, resolver).value;
      } catch (cause) {
        throw corruptContainer(
          this.file,
          this.fileOffset(dataAt, position),
          `record does not decode (${(cause as Error).message})${this.inBlock(index, position)}`,
        );
      }
      position = scanned;
      yield value;
    }
    this.checkBlockEnd(block, position, count, dataAt);
  }

  private readerFor(writer: KnownSchema): { readerType: avro.Type; resolver: AvroResolver | undefined } {
    if (this.options.reader === undefined) return { readerType: writer.type, resolver: undefined };
    const resolved = new ReaderResolution(this.options.reader).resolverFor(writer);
    if (!resolved.ok) throw new RaretideError('avro.schema-mismatch', `Avro container file ${this.file}: ${resolved.problem.reason}`);
    return { readerType: this.options.reader.type, resolver: resolved.value };
  }
}

/** Opens `source` and yields its records: the file source for commands that take Avro files. */
export async function* readContainerRecords(source: string | Readable, options: ContainerReadOptions = {}): AsyncGenerator<unknown> {
  const reader = await ContainerFileReader.open(source, options);
  yield* reader;
}

async function readHeader(cursor: StreamCursor, file: string): Promise<ContainerHeader> {
  const magic = await takeExactly(cursor, file, CONTAINER_MAGIC.length, 'the 4-byte magic');
  if (!magic.equals(CONTAINER_MAGIC)) {
    throw corruptContainer(file, 0, `starts with ${magic.toString('hex')}, not the container magic 4f626a01 ("Obj" 1); this is not an Avro container file`);
  }
  const metadata = new Map<string, Buffer>();
  for (;;) {
    let count = await readLong(cursor, file, 'metadata block count');
    if (count === 0) break;
    if (count < 0) {
      count = -count;
      await readLong(cursor, file, 'metadata block size');
    }
    for (let i = 0; i < count; i++) {
      const key = (await readSized(cursor, file, 'metadata key')).toString('utf8');
      metadata.set(key, Buffer.from(await readSized(cursor, file, `metadata value ${key}`)));
    }
  }
  const syncMarker = Buffer.from(await takeExactly(cursor, file, SYNC_MARKER_BYTES, 'the header sync marker'));
  const headerEnd = cursor.offset;

  const codecName = metadata.get('avro.codec')?.toString('utf8') ?? 'null';
  if (!isContainerCodec(codecName)) {
    throw new RaretideError('avro.container-codec', `Avro container file ${file} uses codec "${codecName}"; raretide reads "null" and "deflate". Rewrite the file with one of those.`);
  }
  const schemaText = metadata.get('avro.schema');
  if (schemaText === undefined) throw corruptContainer(file, headerEnd, 'header metadata has no avro.schema entry');
  let writer: KnownSchema;
  try {
    writer = knownSchema(JSON.parse(schemaText.toString('utf8')), `${file} header`);
  } catch (cause) {
    throw corruptContainer(file, headerEnd, `header avro.schema is not a valid schema (${(cause as Error).message})`);
  }
  return { writer, codec: codecName, metadata, syncMarker };
}

async function readLong(cursor: StreamCursor, file: string, what: string): Promise<number> {
  const at = cursor.offset;
  await cursor.ensure(10);
  const scanned = scanValue(LONG, cursor.available, 0);
  if (!scanned.ok) throw corruptContainer(file, at, `${what}: ${renderProblem(scanned.problem)}`);
  const value = LONG.decode(cursor.available, 0).value as number;
  cursor.take(scanned.value);
  return value;
}

async function readSized(cursor: StreamCursor, file: string, what: string): Promise<Buffer> {
  const at = cursor.offset;
  const length = await readLong(cursor, file, `${what} length`);
  if (length < 0 || length > MAX_METADATA_VALUE_BYTES) throw corruptContainer(file, at, `${what} length ${length} is impossible`);
  return takeExactly(cursor, file, length, what);
}

async function takeExactly(cursor: StreamCursor, file: string, count: number, what: string): Promise<Buffer> {
  if (!(await cursor.ensure(count))) {
    throw corruptContainer(file, cursor.offset + cursor.available.length, `the file ends inside ${what}`);
  }
  return cursor.take(count);
}

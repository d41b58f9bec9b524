import { randomBytes } from 'node:crypto';
import { open, rename, unlink, type FileHandle } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import avro from 'avsc';
import { RaretideError, UsageError } from '../../../config/errors.js';
import type { KnownSchema } from '../known-schema.js';
import { encodeRecord } from '../record-encoding.js';
import { compressBlock } from './block-codec.js';
import { CONTAINER_MAGIC, SYNC_MARKER_BYTES, isContainerCodec, type ContainerCodec } from './container-format.js';

export interface ContainerWriteOptions {
  readonly schema: KnownSchema;
  /** Block compression: `null` or `deflate`. @default 'null' */
  readonly codec?: ContainerCodec;
  /** Encoded bytes of records gathered before a block is written (a block holds at least one record). @default 65536 */
  readonly blockSizeBytes?: number;
  /** The 16-byte sync marker. Give one (replay derives it from its seed) for byte-identical files. @default 16 random bytes */
  readonly syncMarker?: Uint8Array;
  /** Extra header metadata; keys starting with `avro.` are reserved by the specification. @default {} */
  readonly metadata?: Readonly<Record<string, string | Uint8Array>>;
  /** zlib compression level for `deflate`, 1 (fast) to 9 (small). @default 6 */
  readonly deflateLevel?: number;
}

const LONG = avro.Type.forSchema('long');
const METADATA = avro.Type.forSchema({ type: 'map', values: 'bytes' });

/**
 * Writes an Avro object container file block by block. Output goes to a temporary file beside the
 * target and is renamed over it on `close`, so readers never see a partial file, even if the
 * process dies mid-write.
 */
export class ContainerFileWriter {
  private pending: Buffer[] = [];
  private pendingBytes = 0;
  /** Block writes run one after another, in order, even when appends are not awaited. */
  private writes: Promise<void> = Promise.resolve();
  private finished = false;

  private constructor(
    readonly path: string,
    private readonly tempPath: string,
    private readonly handle: FileHandle,
    private readonly schema: KnownSchema,
    private readonly codec: ContainerCodec,
    private readonly blockSizeBytes: number,
    private readonly syncMarker: Buffer,
    private readonly deflateLevel: number,
  ) {}

  static async create(path: string, options: ContainerWriteOptions): Promise<ContainerFileWriter> {
    const codec = options.codec ?? 'null';
    const blockSizeBytes = options.blockSizeBytes ?? 65_536;
    const deflateLevel = options.deflateLevel ?? 6;
    const syncMarker = Buffer.from(options.syncMarker ?? randomBytes(SYNC_MARKER_BYTES));
    checkOptions(codec, blockSizeBytes, deflateLevel, syncMarker, options.metadata ?? {});

    const tempPath = join(dirname(path), `.${basename(path)}.${randomBytes(6).toString('hex')}.tmp`);
    let handle: FileHandle;
    try {
      handle = await open(tempPath, 'wx');
    } catch (cause) {
      throw new UsageError(`Cannot create Avro container file ${path} (${(cause as Error).message}); check the output directory.`, { cause });
    }
    const writer = new ContainerFileWriter(path, tempPath, handle, options.schema, codec, blockSizeBytes, syncMarker, deflateLevel);
    writer.enqueue(async () => writer.write(header(options.schema, codec, syncMarker, options.metadata ?? {})));
    return writer;
  }

  /** Adds a record; resolves once any block it completed is written. */
  async append(record: unknown): Promise<void> {
    this.checkOpen();
    await this.appendEncoded(encodeRecord(this.schema, record));
  }

  /**
   * Adds a record already encoded with the file's schema (the caller vouches for the bytes: they go
   * into the block as they are); resolves once any block it completed is written.
   */
  async appendEncoded(encoded: Buffer): Promise<void> {
    this.checkOpen();
    this.pending.push(encoded);
    this.pendingBytes += encoded.length;
    if (this.pendingBytes >= this.blockSizeBytes) this.flushBlock();
    await this.writes;
  }

  /** Writes the last block, syncs, and moves the file into place. */
  async close(): Promise<void> {
    if (this.finished) return;
    this.finished = true;
    this.flushBlock();
    try {
      await this.writes;
      await this.handle.datasync();
      await this.handle.close();
      await rename(this.tempPath, this.path);
    } catch (cause) {
      await this.discard();
      throw new RaretideError('avro.container-write', `Writing Avro container file ${this.path} failed: ${(cause as Error).message}`, { cause });
    }
  }

  /** Gives up: removes the temporary file and leaves any earlier file at `path` untouched. */
  async abort(): Promise<void> {
    this.finished = true;
    this.pending = [];
    await this.writes.catch(() => undefined);
    await this.discard();
  }

  private checkOpen(): void {
    if (this.finished) throw new RaretideError('avro.container-closed', `Avro container file ${this.path} is already closed; records cannot be added.`);
  }

  private flushBlock(): void {
    if (this.pending.length === 0) return;
    const count = this.pending.length;
    const raw = Buffer.concat(this.pending, this.pendingBytes);
    this.pending = [];
    this.pendingBytes = 0;
    this.enqueue(async () => {
      const data = await compressBlock(this.codec, raw, this.deflateLevel);
      await this.write(Buffer.concat([LONG.toBuffer(count), LONG.toBuffer(data.length), data, this.syncMarker]));
    });
  }

  private enqueue(step: () => Promise<void>): void {
    this.writes = this.writes.then(step);
    // A failed write is reported by the next append or by close; keep Node from flagging it meanwhile.
    this.writes.catch(() => undefined);
  }

  private async write(bytes: Buffer): Promise<void> {
    await this.handle.write(bytes);
  }

  private async discard(): Promise<void> {
    await this.handle.close().catch(() => undefined);
    await unlink(this.tempPath).catch(() => undefined);
  }
}

function header(schema: KnownSchema, codec: ContainerCodec, syncMarker: Buffer, metadata: Readonly<Record<string, string | Uint8Array>>): Buffer {
  const entries: Record<string, Buffer> = {
    'avro.schema': Buffer.from(JSON.stringify(schema.json), 'utf8'),
    'avro.codec': Buffer.from(codec, 'utf8'),
  };
  for (const [key, value] of Object.entries(metadata)) entries[key] = Buffer.from(value);
  return Buffer.concat([CONTAINER_MAGIC, METADATA.toBuffer(entries), syncMarker]);
}

function checkOptions(
  codec: string,
  blockSizeBytes: number,
  deflateLevel: number,
  syncMarker: Buffer,
  metadata: Readonly<Record<string, unknown>>,
): void {
  if (!isContainerCodec(codec)) throw new UsageError(`Expected container codec "null" or "deflate", got "${codec}".`);
  if (!Number.isInteger(blockSizeBytes) || blockSizeBytes < 1) {
    throw new UsageError(`Expected \`blockSizeBytes\` to be a whole number from 1 up, got ${blockSizeBytes}.`);
  }
  if (!Number.isInteger(deflateLevel) || deflateLevel < 1 || deflateLevel > 9) {
    throw new UsageError(`Expected \`deflateLevel\` to be a whole number from 1 to 9, got ${deflateLevel}.`);
  }
  if (syncMarker.length !== SYNC_MARKER_BYTES) {
    throw new UsageError(`Expected \`syncMarker\` to be ${SYNC_MARKER_BYTES} bytes, got ${syncMarker.length}.`);
  }
  const reserved = Object.keys(metadata).filter((key) => key.startsWith('avro.'));
  if (reserved.length > 0) {
    throw new UsageError(`Metadata keys ${reserved.join(', ')} start with "avro.", which the Avro specification reserves; rename them.`);
  }
}

import { randomBytes } from 'node:crypto';
import { open, rename, unlink, type FileHandle } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { RaretideError, UsageError } from '../../config/errors.js';

/** Text gathered before a write. */
const FLUSH_BYTES = 64 * 1024;

/**
 * A JSON-lines file written like the container files: to a temporary name beside the target, renamed
 * into place on `close`, removed on `abort`, so no reader ever sees half of one.
 */
export class JsonLinesFile {
  private pending: string[] = [];
  private pendingLength = 0;
  private finished = false;

  private constructor(
    readonly path: string,
    private readonly tempPath: string,
    private readonly handle: FileHandle,
  ) {}

  static async create(path: string): Promise<JsonLinesFile> {
    const tempPath = join(dirname(path), `.${basename(path)}.${randomBytes(6).toString('hex')}.tmp`);
    try {
      return new JsonLinesFile(path, tempPath, await open(tempPath, 'wx'));
    } catch (cause) {
      throw new UsageError(`Cannot create ${path} (${(cause as Error).message}); check the output directory.`, { cause });
    }
  }

  /** Adds one value as a line; writes when enough text has gathered. */
  async append(value: unknown): Promise<void> {
    if (this.finished) throw new RaretideError('files.closed', `${this.path} is already closed; lines cannot be added.`);
    const line = `${JSON.stringify(value)}\n`;
    this.pending.push(line);
    this.pendingLength += line.length;
    if (this.pendingLength >= FLUSH_BYTES) await this.flush();
  }

  async close(): Promise<void> {
    if (this.finished) return;
    this.finished = true;
    try {
      await this.flush();
      await this.handle.datasync();
      await this.handle.close();
      await rename(this.tempPath, this.path);
    } catch (cause) {
      await this.discard();
      throw new RaretideError('files.write', `Writing ${this.path} failed: ${(cause as Error).message}`, { cause });
    }
  }

  async abort(): Promise<void> {
    this.finished = true;
    this.pending = [];
    await this.discard();
  }

  private async flush(): Promise<void> {
    if (this.pending.length === 0) return;
    const text = this.pending.join('');
    this.pending = [];
    this.pendingLength = 0;
    await this.handle.write(text, null, 'utf8');
  }

  private async discard(): Promise<void> {
    await this.handle.close().catch(() => undefined);
    await unlink(this.tempPath).catch(() => undefined);
  }
}

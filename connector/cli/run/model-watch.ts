/**
 * Model hot reload: polls the model directory's manifest for a new model id. `fit` writes a model
 * directory under a temporary name and renames it into place (model/vae/artifact.ts), so a manifest
 * that reads whole belongs to a complete directory. A new id is loaded and verified in full (checksums,
 * content id, codec) and checked against the running worker (same classes, same schema) before it is
 * offered; a model that fails any of that is logged and ignored, and the old one keeps running.
 */
import { readFile, stat } from 'node:fs/promises';
import { join } from 'node:path';

import { MANIFEST_FILE } from '../../../model/vae/artifact.js';
import type { Logger } from '../../ops/logger.js';

/** What one poll found. */
export type ModelCheck = 'unchanged' | 'offered' | 'rejected' | 'unreadable';

export interface ModelWatchOptions<Model> {
  /** `model.dir`. */
  readonly directory: string;
  /** Id of the model loaded at start. */
  readonly initialId: string;
  /** Time between polls. @default 5000 */
  readonly intervalMs?: number;
  /** Loads and verifies the model in `directory`; rejects when it is unusable. */
  readonly load: (directory: string) => Promise<Model>;
  /** Throws, saying why, when a verified model cannot replace the running one. */
  readonly accept: (candidate: Model) => void;
  /** Frees a candidate that was not accepted. */
  readonly discard: (candidate: Model) => void;
  /** Receives each accepted model (to swap in between batches). */
  readonly offer: (candidate: Model, id: string) => void;
  readonly log: Logger;
}

export class ModelWatcher<Model> {
  private readonly intervalMs: number;
  /** The manifest version (id, mtime, size) last acted on, so one version is loaded at most once. */
  private lastVersion: string | undefined;
  private lastId: string;
  private lastUnreadable: string | undefined;
  private timer: NodeJS.Timeout | undefined;
  private checking: Promise<ModelCheck> | undefined;

  constructor(private readonly options: ModelWatchOptions<Model>) {
    this.intervalMs = options.intervalMs ?? 5_000;
    this.lastId = options.initialId;
  }

  start(): void {
    if (this.timer !== undefined) return;
    this.timer = setInterval(() => void this.check(), this.intervalMs);
    // Polling alone must not keep a stopping process alive.
    this.timer.unref();
  }

  /** Stops polling and waits for a poll under way (a model being loaded). */
  async stop(): Promise<void> {
    clearInterval(this.timer);
    this.timer = undefined;
    await this.checking;
  }

  /** One poll; overlapping calls share the poll under way. */
  check(): Promise<ModelCheck> {
    this.checking ??= this.poll().finally(() => {
      this.checking = undefined;
    });
    return this.checking;
  }

  private async poll(): Promise<ModelCheck> {
    const { directory, log } = this.options;
    const manifest = await readManifestVersion(directory);
    if (!manifest.ok) {
      if (manifest.reason !== this.lastUnreadable) log.warn(`cannot read the model manifest in ${directory} (${manifest.reason}); keeping model ${this.lastId} and trying again`);
      this.lastUnreadable = manifest.reason;
      return 'unreadable';
    }
    this.lastUnreadable = undefined;
    if (manifest.version === this.lastVersion) return 'unchanged';
    this.lastVersion = manifest.version;
    if (manifest.id === this.lastId) return 'unchanged';

    let candidate: Model;
    try {
      candidate = await this.options.load(directory);
    } catch (error) {
      log.warn(`a new model appeared in ${directory} (id ${manifest.id}) but cannot be loaded; keeping model ${this.lastId}`, { error });
      return 'rejected';
    }
    try {
      this.options.accept(candidate);
    } catch (error) {
      this.options.discard(candidate);
      log.warn(`the new model in ${directory} (id ${manifest.id}) does not fit this worker; keeping model ${this.lastId}`, { error });
      return 'rejected';
    }
    log.info(`loaded and verified model ${manifest.id} from ${directory}; it replaces model ${this.lastId} from the next batch`, { modelId: manifest.id });
    this.lastId = manifest.id;
    this.options.offer(candidate, manifest.id);
    return 'offered';
  }
}

type ManifestVersion = { readonly ok: true; readonly id: string; readonly version: string } | { readonly ok: false; readonly reason: string };

/** The id the manifest claims and a version key that changes whenever the file is rewritten. */
async function readManifestVersion(directory: string): Promise<ManifestVersion> {
  const path = join(directory, MANIFEST_FILE);
  try {
    const [info, text] = await Promise.all([stat(path), readFile(path, 'utf8')]);
    const id = (JSON.parse(text) as { id?: unknown }).id;
    if (typeof id !== 'string' || id === '') return { ok: false, reason: `${path} names no model id` };
    return { ok: true, id, version: `${id}@${info.mtimeMs}@${info.size}@${info.ino}` };
  } catch (error) {
    return { ok: false, reason: (error as Error).message };
  }
}

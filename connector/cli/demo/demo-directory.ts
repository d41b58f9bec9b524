/**
 * The demo's directory: where each artefact goes, and a guard so the demo only ever writes into an
 * empty directory or one an earlier demo made (a marker file says so), never over someone's files.
 */
import { mkdir, readdir, stat, writeFile } from 'node:fs/promises';
import { join } from 'node:path';

import { UsageError } from '../../../config/errors.js';

export const DEFAULT_DEMO_DIR = 'raretide-demo';

/** Marks a directory as the demo's own, so a second run may replace what the first wrote. */
const MARKER = '.raretide-demo';

export interface DemoPaths {
  readonly dir: string;
  readonly config: string;
  readonly schema: string;
  /** Readings to fit and replay. */
  readonly history: string;
  /** Later readings, never trained on: the real records the report scores on. */
  readonly holdout: string;
  readonly model: string;
  readonly balanced: string;
  readonly summary: string;
  readonly reportHtml: string;
  readonly reportJson: string;
}

/** Paths as the user gave the directory (relative ones stay relative: the config is read from the working directory). */
export function demoPaths(dir: string): DemoPaths {
  const balanced = join(dir, 'balanced.avro');
  return {
    dir,
    config: join(dir, 'pump-station.yaml'),
    schema: join(dir, 'schemas', 'pump-station-telemetry.avsc'),
    history: join(dir, 'history.avro'),
    holdout: join(dir, 'holdout.avro'),
    model: join(dir, 'model'),
    balanced,
    summary: `${balanced}.summary.json`,
    reportHtml: join(dir, 'report.html'),
    reportJson: join(dir, 'report.json'),
  };
}

/** Creates the directory (and `schemas/`), refusing one that holds files the demo did not write. */
export async function prepareDemoDirectory(paths: DemoPaths): Promise<void> {
  const entries = await listing(paths.dir);
  if (entries === 'not-a-directory') throw new UsageError(`--dir ${paths.dir} is a file; give a directory for the demo's files, e.g. --dir ${DEFAULT_DEMO_DIR}`);
  if (entries !== undefined && entries.length > 0 && !entries.includes(MARKER)) {
    throw new UsageError(`--dir ${paths.dir} holds files the demo did not write; give a new or empty directory, e.g. --dir ${DEFAULT_DEMO_DIR}`);
  }
  await mkdir(join(paths.dir, 'schemas'), { recursive: true });
  await writeFile(join(paths.dir, MARKER), 'Written by `raretide demo` (invented data only); this directory can be deleted.\n');
}

async function listing(dir: string): Promise<string[] | 'not-a-directory' | undefined> {
  try {
    if (!(await stat(dir)).isDirectory()) return 'not-a-directory';
  } catch {
    return undefined;
  }
  return readdir(dir);
}

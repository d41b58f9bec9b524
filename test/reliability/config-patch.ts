/**
 * Changes to a run config written by test/support/run-worker-scenario.ts `writeRunConfig` (a JSON file),
 * for what that helper does not offer: more librdkafka properties, the log level.
 */
import { readFile, writeFile } from 'node:fs/promises';

export interface RunConfigPatch {
  /** Laid over `kafka.settings`. */
  readonly kafkaSettings?: Readonly<Record<string, string | number | boolean>>;
  readonly logLevel?: 'error' | 'warn' | 'info' | 'debug';
}

export async function patchRunConfig(path: string, patch: RunConfigPatch): Promise<void> {
  const config = JSON.parse(await readFile(path, 'utf8')) as { kafka: { settings?: Record<string, unknown> }; log?: Record<string, unknown> };
  if (patch.kafkaSettings !== undefined) config.kafka.settings = { ...config.kafka.settings, ...patch.kafkaSettings };
  if (patch.logLevel !== undefined) config.log = { ...config.log, level: patch.logLevel };
  await writeFile(path, JSON.stringify(config, null, 2));
}

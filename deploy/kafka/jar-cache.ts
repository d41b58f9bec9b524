import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, readdir, rename, rm, writeFile } from 'node:fs/promises';
import { homedir } from 'node:os';
import { dirname, join } from 'node:path';

import { KAFKA_VERSION, kafkaAssetsDir } from './assets.js';

/** Written last, so a cache dir holding it is known to be complete. */
const COMPLETE_MARKER = '.complete';

/**
 * Where the broker jars live: `RARETIDE_KAFKA_CACHE` if set, else
 * `${XDG_CACHE_HOME:-~/.cache}/raretide/kafka-<version>`. Outside the repo so a clean
 * checkout stays small and later runs work offline.
 */
export function defaultJarCacheDir(env: NodeJS.ProcessEnv = process.env): string {
  if (env.RARETIDE_KAFKA_CACHE) return env.RARETIDE_KAFKA_CACHE;
  const cacheHome = env.XDG_CACHE_HOME || join(homedir(), '.cache');
  return join(cacheHome, 'raretide', `kafka-${KAFKA_VERSION}`);
}

export function isJarCacheComplete(cacheDir: string): boolean {
  return existsSync(join(cacheDir, COMPLETE_MARKER));
}

/**
 * Makes sure `cacheDir` holds the broker's runtime jars, fetching them with Maven from the
 * pom.xml beside this file on first use. Jars land in a sibling temp dir first and are moved
 * into place whole, so an interrupted fetch never leaves a half-filled cache behind.
 */
export async function ensureKafkaJars(cacheDir: string, log: (line: string) => void): Promise<string> {
  if (isJarCacheComplete(cacheDir)) return cacheDir;
  await mkdir(dirname(cacheDir), { recursive: true });
  const staging = `${cacheDir}.partial-${process.pid}`;
  await rm(staging, { recursive: true, force: true });
  log(`fetching Apache Kafka ${KAFKA_VERSION} jars with Maven into ${cacheDir} (once; ~45 MB)`);
  await runMaven(staging);
  const jars = (await readdir(staging)).filter((name) => name.endsWith('.jar'));
  if (!jars.some((name) => name.startsWith(`kafka_2.13-${KAFKA_VERSION}`))) {
    throw new Error(`Maven finished but ${staging} holds no kafka_2.13-${KAFKA_VERSION}.jar; check ${join(kafkaAssetsDir(), 'pom.xml')}`);
  }
  await writeFile(join(staging, COMPLETE_MARKER), `${jars.length} jars\n`);
  try {
    await rename(staging, cacheDir);
  } catch (error) {
    // Another process may have completed the same fetch first; its cache is as good as ours.
    await rm(staging, { recursive: true, force: true });
    if (!isJarCacheComplete(cacheDir)) throw error;
  }
  return cacheDir;
}

function runMaven(outputDir: string): Promise<void> {
  const args = [
    '-q', '-B',
    '-f', join(kafkaAssetsDir(), 'pom.xml'),
    'dependency:copy-dependencies',
    '-DincludeScope=runtime',
    `-DoutputDirectory=${outputDir}`,
  ];
  return new Promise((resolve, reject) => {
    const child = spawn('mvn', args, { stdio: ['ignore', 'pipe', 'pipe'] });
    let output = '';
    child.stdout.on('data', (chunk: Buffer) => { output += chunk.toString(); });
    child.stderr.on('data', (chunk: Buffer) => { output += chunk.toString(); });
    child.on('error', (error) => reject(new Error(`could not run Maven (mvn): ${error.message}; install Maven 3 or set RARETIDE_KAFKA_CACHE to a dir holding the Kafka jars`)));
    child.on('exit', (code) => {
      if (code === 0) resolve();
      else reject(new Error(`mvn dependency:copy-dependencies exited with ${code}:\n${output.slice(-4000)}`));
    });
  });
}

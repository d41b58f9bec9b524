import { spawn } from 'node:child_process';

import { defaultJarCacheDir, isJarCacheComplete } from './jar-cache.js';

/** The broker jars of Kafka 4.x are compiled for Java 17. */
export const MIN_JAVA_MAJOR = 17;

/**
 * What is missing before `startLocalBroker` can work: an empty list means go. Maven is only
 * needed while the jar cache is still empty.
 */
export async function missingLocalBrokerPrerequisites(jarCacheDir = defaultJarCacheDir()): Promise<string[]> {
  const problems: string[] = [];
  const java = await runForOutput('java', ['-version']);
  const major = java === undefined ? undefined : parseJavaMajor(java);
  if (major === undefined) problems.push(`Java ${MIN_JAVA_MAJOR}+ (no working \`java\` on PATH)`);
  else if (major < MIN_JAVA_MAJOR) problems.push(`Java ${MIN_JAVA_MAJOR}+ (found Java ${major})`);
  if (!isJarCacheComplete(jarCacheDir) && (await runForOutput('mvn', ['-v'])) === undefined) {
    problems.push(`Maven 3 (no \`mvn\` on PATH, and no Kafka jars cached in ${jarCacheDir} yet)`);
  }
  return problems;
}

/** `java -version` prints e.g. `openjdk version "17.0.15"`, or `"1.8.0_392"` for Java 8. */
export function parseJavaMajor(versionText: string): number | undefined {
  const match = /version "(\d+)(?:\.(\d+))?/.exec(versionText);
  if (!match) return undefined;
  const first = Number(match[1]);
  return first === 1 && match[2] !== undefined ? Number(match[2]) : first;
}

/** Combined stdout+stderr of a command that exits 0 within `timeoutMs`, else undefined. */
function runForOutput(command: string, args: string[], timeoutMs = 15_000): Promise<string | undefined> {
  return new Promise((resolve) => {
    const child = spawn(command, args, { stdio: ['ignore', 'pipe', 'pipe'], timeout: timeoutMs });
    let output = '';
    child.stdout.on('data', (chunk: Buffer) => { output += chunk.toString(); });
    child.stderr.on('data', (chunk: Buffer) => { output += chunk.toString(); });
    child.on('error', () => resolve(undefined));
    child.on('exit', (code) => resolve(code === 0 ? output : undefined));
  });
}

import { execFile } from 'node:child_process';
import { mkdir, readFile, rm, writeFile } from 'node:fs/promises';
import { homedir } from 'node:os';
import { dirname, join } from 'node:path';
import { promisify } from 'node:util';

import { RUN_DIR_PROPERTY } from './local-broker.js';
import { isProcessAlive } from './process-control.js';

/** What `cli.ts up` leaves behind for `down` and `status`. */
export interface BrokerRunState {
  brokers: string;
  pid: number;
  runDir: string;
  logFile: string;
  startedAt: string;
}

/** `RARETIDE_KAFKA_STATE`, else `${XDG_STATE_HOME:-~/.local/state}/raretide/local-kafka.json`. */
export function runStateFile(env: NodeJS.ProcessEnv = process.env): string {
  if (env.RARETIDE_KAFKA_STATE) return env.RARETIDE_KAFKA_STATE;
  const stateHome = env.XDG_STATE_HOME || join(homedir(), '.local', 'state');
  return join(stateHome, 'raretide', 'local-kafka.json');
}

export async function readRunState(file: string): Promise<BrokerRunState | undefined> {
  try {
    return JSON.parse(await readFile(file, 'utf8')) as BrokerRunState;
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return undefined;
    throw new Error(`cannot read the local broker state file ${file}: ${(error as Error).message}; delete it if the broker is gone`);
  }
}

export async function writeRunState(file: string, state: BrokerRunState): Promise<void> {
  await mkdir(dirname(file), { recursive: true });
  await writeFile(file, JSON.stringify(state, null, 2) + '\n');
}

export async function removeRunState(file: string): Promise<void> {
  await rm(file, { force: true });
}

/**
 * True when `state.pid` is still the broker we started: alive, and its command line carries
 * our run-dir marker (after a reboot the pid may belong to anything).
 */
export async function isRecordedBrokerRunning(state: BrokerRunState): Promise<boolean> {
  if (!isProcessAlive(state.pid)) return false;
  try {
    const { stdout } = await promisify(execFile)('ps', ['-o', 'args=', '-p', String(state.pid)]);
    return stdout.includes(`-D${RUN_DIR_PROPERTY}=${state.runDir}`);
  } catch {
    return false;
  }
}

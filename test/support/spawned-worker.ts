/**
 * `raretide run` as a real child process (`node --import tsx connector/cli/main.ts run`, with the Node
 * options it is deployed with, connector/cli/run/node-options.ts), for the tests that kill it with SIGKILL or
 * SIGTERM, and a count of what it has written so far.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { once } from 'node:events';
import { fileURLToPath } from 'node:url';

import { WORKER_NODE_OPTIONS } from '../../connector/cli/run/node-options.js';
import { connectConsumer, disconnect } from './kafka-clients.js';
import { uniqueName } from './topics.js';

/** Where spawned workers run from (their arguments name repository paths). */
export const repositoryRoot = fileURLToPath(new URL('../..', import.meta.url));

export interface SpawnedWorker {
  readonly child: ChildProcess;
  /** Everything the worker wrote to standard error so far (its JSON log). */
  readonly stderr: () => string;
  readonly exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

/** Spawned workers not yet known to have exited; `killLeftovers` ends them (for `afterAll`). */
const spawned: ChildProcess[] = [];

/**
 * Node's arguments for `raretide run` from source, run from the repository root: the deployed Node
 * options, then `nodeFlags`, tsx, the `preload` modules (imported after tsx, so they may be TypeScript).
 */
export function runWorkerArguments(configPath: string, instanceId: string, extra: { nodeFlags?: readonly string[]; preload?: readonly string[] } = {}): string[] {
  const preload = (extra.preload ?? []).flatMap((module) => ['--import', module]);
  return [...WORKER_NODE_OPTIONS, ...(extra.nodeFlags ?? []), '--import', 'tsx', ...preload, 'connector/cli/main.ts', 'run', '--config', configPath, '--instance-id', instanceId];
}

export function spawnWorker(configPath: string, instanceId: string): SpawnedWorker {
  const child = spawn(process.execPath, runWorkerArguments(configPath, instanceId), {
    cwd: repositoryRoot,
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  spawned.push(child);
  let stderr = '';
  child.stderr!.setEncoding('utf8').on('data', (text: string) => (stderr += text));
  const exited = once(child, 'exit').then(([code, signal]) => ({ code: code as number | null, signal: signal as NodeJS.Signals | null }));
  return { child, stderr: () => stderr, exited };
}

/** SIGKILLs every spawned worker still running. */
export function killLeftovers(): void {
  for (const child of spawned) if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL');
}

/**
 * Records in `topic`, open transactions included: a read_uncommitted consumer's end offsets are the high
 * watermarks (a read_committed one is told the last stable offsets, which stop at the first open
 * transaction). A topic the worker has not created yet reads as empty.
 */
export async function recordsWritten(brokers: string, topic: string, partitions: number): Promise<number> {
  const consumer = await connectConsumer({ 'metadata.broker.list': brokers, 'group.id': uniqueName('test-hw'), 'isolation.level': 'read_uncommitted' });
  try {
    let total = 0;
    for (let partition = 0; partition < partitions; partition++) {
      total += await new Promise<number>((resolve) => {
        consumer.queryWatermarkOffsets(topic, partition, 5_000, (error, offsets) => resolve(error ? 0 : offsets.highOffset));
      });
    }
    return total;
  } finally {
    await disconnect(consumer);
  }
}

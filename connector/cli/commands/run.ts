import { hostname } from 'node:os';

import { Option, type Command } from 'commander';

import { UsageError } from '../../../config/errors.js';
import { installGracefulShutdown } from '../../ops/shutdown.js';
import { globalOptions, type CliContext } from '../cli-context.js';
import { configOption } from '../options.js';
import { startWorker } from '../run/run-worker.js';

interface RunOptions {
  readonly config: string;
  readonly instanceId?: string;
}

/**
 * Longest time from SIGTERM/SIGINT to exit: the batch in hand, its checkpoint and closing the clients
 * (bounded at 20 s themselves). Kubernetes' default termination grace period is 30 s (common practice),
 * so the worker exits on its own before it would be killed.
 */
export const STOP_DEADLINE_MS = 28_000;

/** Transactional ids allow any characters, but the id also appears in logs and client ids: keep it plain. */
const INSTANCE_ID = /^[A-Za-z0-9._-]{1,200}$/;

/** `raretide run`: the streaming worker, topic → topic, until SIGTERM or SIGINT. */
export function registerRun(program: Command, context: CliContext): void {
  program
    .command('run')
    .description('run the streaming worker: consume the source topic, emit synthetic records of rare classes to the output topic')
    .addOption(configOption())
    .addOption(new Option('--instance-id <id>', "this replica's stable name; names its transactional id under exactly-once (default: the host name)"))
    .addHelpText(
      'after',
      '\nSIGTERM or SIGINT finishes the batch in hand, checkpoints it and exits 0; a second signal exits at once.\n' +
        '\nExample:\n  $ raretide run --config raretide.yaml\n',
    )
    .action(async (options: RunOptions, command: Command) => {
      const instanceId = options.instanceId ?? hostname();
      if (!INSTANCE_ID.test(instanceId)) {
        throw new UsageError(`--instance-id ${JSON.stringify(instanceId)}: expected 1–200 characters from A-Z a-z 0-9 . _ -, e.g. --instance-id raretide-0`);
      }
      const global = globalOptions(command);
      const stop = new AbortController();
      const worker = await startWorker(
        { configPath: options.config, instanceId, quiet: global.quiet, ...(global.logFormat === undefined ? {} : { logFormat: global.logFormat }) },
        { context, signal: stop.signal },
      );
      const shutdown = installGracefulShutdown({
        stop: async () => {
          stop.abort();
          await worker.finished;
        },
        deadlineMs: STOP_DEADLINE_MS,
        log: worker.log,
      });
      try {
        await worker.finished;
      } finally {
        shutdown.dispose();
      }
    });
}

import { Option, type Command } from 'commander';

import { UsageError } from '../../../config/errors.js';
import { globalOptions, type CliContext } from '../cli-context.js';
import { demoTopics } from '../demo/demo-config.js';
import { DEFAULT_DEMO_DIR } from '../demo/demo-directory.js';
import { runFileDemo } from '../demo/run-file-demo.js';
import { LiveDemoInterrupted, runLiveDemo } from '../demo/run-live-demo.js';

interface DemoOptions {
  readonly dir: string;
  readonly records: string;
  readonly seed: string;
  readonly epochs: string;
  readonly kafka?: boolean;
  readonly duration?: string;
  readonly rate?: string;
  readonly topicPrefix?: string;
}

/**
 * Defaults chosen to finish the whole file demo well inside 3 minutes on the 2-core project machine
 * (test/bench/demo.ts measured 104 s with other work loading it, 48 s of CPU), with a few dozen readings
 * of the rarest fault in the holdout. At 40,000 readings the same machine took over 6 minutes.
 */
export const DEFAULT_DEMO_RECORDS = 20_000;
export const DEFAULT_DEMO_EPOCHS = 30;
const DEFAULT_RATE = 200;
const DEFAULT_TOPIC_PREFIX = 'raretide-demo';
/** Fewer readings leave a rare fault with no record in the holdout. */
const MIN_RECORDS = 2_000;

/** `raretide demo`: the whole job on invented data, without a broker or, with `--kafka`, live on one. */
export function registerDemo(program: Command, context: CliContext): void {
  program
    .command('demo')
    .description('run the whole job on invented pump-station telemetry: generate, fit, replay to a balanced file, evaluate (no broker needed); --kafka runs the live worker')
    .addOption(new Option('--dir <path>', "directory for the demo's files (created; a directory the demo wrote before is reused)").default(DEFAULT_DEMO_DIR))
    .addOption(new Option('--records <n>', 'readings to generate; the last quarter is held out to score on').default(String(DEFAULT_DEMO_RECORDS)))
    .addOption(new Option('--seed <n>', 'seed of the readings, the training and the sampling').default('1'))
    .addOption(new Option('--epochs <n>', 'most training epochs').default(String(DEFAULT_DEMO_EPOCHS)))
    .addOption(new Option('--kafka', 'run the live worker on KAFKA_BROKERS, else on a local broker the demo starts (needs Java 17 + Maven)'))
    .addOption(new Option('--duration <s>', 'with --kafka: stop after this many seconds (default: at Ctrl-C)'))
    .addOption(new Option('--rate <n>', `with --kafka: readings produced a second (default: ${DEFAULT_RATE})`))
    .addOption(new Option('--topic-prefix <name>', `with --kafka: start of the topic and group names (default: ${DEFAULT_TOPIC_PREFIX})`))
    .addHelpText(
      'after',
      '\nEvery reading is invented; the directory can be deleted afterwards.\n' +
        '\nExamples:\n  $ raretide demo\n  $ raretide demo --dir /tmp/pumps --records 20000 --seed 7\n  $ KAFKA_BROKERS=127.0.0.1:9092 raretide demo --kafka --duration 60\n',
    )
    .action(async (options: DemoOptions, command: Command) => {
      const { quiet } = globalOptions(command);
      const records = wholeNumber('--records', options.records, MIN_RECORDS);
      const seed = wholeNumber('--seed', options.seed, 0);
      const epochs = wholeNumber('--epochs', options.epochs, 1);
      const now = () => performance.now();
      if (options.kafka !== true) {
        const liveOnly = (['duration', 'rate', 'topicPrefix'] as const).find((name) => options[name] !== undefined);
        if (liveOnly !== undefined) throw new UsageError(`--${liveOnly.replace(/[A-Z]/g, (letter) => `-${letter.toLowerCase()}`)} is for the live demo; add --kafka, or drop it`);
        const topics = demoTopics(DEFAULT_TOPIC_PREFIX);
        await runFileDemo({ dir: options.dir, records, seed, quiet, config: { brokers: '127.0.0.1:9092', topics, epochs, metricsPort: 0 } }, { context, now });
        return;
      }
      try {
        await runLiveDemo(
          {
            dir: options.dir,
            records,
            seed,
            epochs,
            topics: demoTopics(topicPrefix(options.topicPrefix)),
            perSecond: options.rate === undefined ? DEFAULT_RATE : wholeNumber('--rate', options.rate, 1),
            durationSeconds: options.duration === undefined ? undefined : wholeNumber('--duration', options.duration, 1),
            quiet,
          },
          { context, now, wallClock: () => Date.now() },
        );
      } catch (error) {
        // Ctrl-C before the live run: everything started was stopped, which is what was asked for.
        if (!(error instanceof LiveDemoInterrupted)) throw error;
      }
    });
}

/** Kafka topic names allow ASCII letters, digits, `.`, `_` and `-` (Apache Kafka's topic name rule); the suffixes take the rest. */
function topicPrefix(text: string | undefined): string {
  if (text === undefined) return DEFAULT_TOPIC_PREFIX;
  if (!/^[A-Za-z0-9._-]{1,200}$/.test(text)) throw new UsageError(`--topic-prefix = ${JSON.stringify(text)}: expected 1–200 characters from A-Z a-z 0-9 . _ -, e.g. --topic-prefix ${DEFAULT_TOPIC_PREFIX}`);
  return text;
}

function wholeNumber(flag: string, text: string, minimum: number): number {
  const value = Number(text);
  if (!/^\d+$/.test(text.trim()) || !Number.isSafeInteger(value) || value < minimum || value > 2 ** 32 - 1) {
    throw new UsageError(`${flag} = ${JSON.stringify(text)}: expected a whole number from ${minimum} to 4294967295, e.g. ${flag} ${Math.max(minimum, 10)}`);
  }
  return value;
}

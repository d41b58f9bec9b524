import { Option, type Command } from 'commander';
import { UsageError } from '../../../config/errors.js';
import { globalOptions, type CliContext } from '../cli-context.js';
import { configOption } from '../options.js';
import { endpointsFrom, type EndpointOptions } from '../replay/replay-endpoints.js';
import { runReplay } from '../replay/run-replay.js';

interface ReplayOptions extends EndpointOptions {
  readonly config: string;
  readonly seed?: string;
  readonly includeOriginals?: boolean;
  readonly provenance?: 'field' | 'sidecar';
  readonly rateCap?: boolean;
}

function seedOption(text: string | undefined): number | undefined {
  if (text === undefined) return undefined;
  const seed = Number(text);
  if (!/^[0-9]+$/.test(text) || !Number.isSafeInteger(seed) || seed > 2 ** 32 - 1) {
    throw new UsageError(`--seed = ${JSON.stringify(text)}: expected a whole number from 0 to 4294967295, e.g. --seed 7`);
  }
  return seed;
}

/** `raretide replay`: rebuilds a balanced data set from history through the same pipeline as `run`. */
export function registerReplay(program: Command, context: CliContext): void {
  program
    .command('replay')
    .description('replay recorded records through the pipeline into a balanced output, reproducibly (same input, model and seed → same bytes)')
    .addOption(configOption())
    .addOption(new Option('-f, --file <in.avro>', 'Avro container file to replay'))
    .addOption(new Option('--from-topic', "replay the config's source.topic as it stands now (up to the end offsets taken at start; partition by partition, in offset order)"))
    .addOption(new Option('--start-offset <n>', 'with --from-topic: start every partition at this offset (default: the earliest)'))
    .addOption(new Option('--start-time <iso>', 'with --from-topic: start every partition at its first record at or after this time'))
    .addOption(new Option('-o, --out <out.avro>', 'Avro container file to write (replaced atomically at the end)'))
    .addOption(new Option('--to-topic', "write to the config's sink.topic (dead letters to sink.deadLetterTopic)"))
    .addOption(new Option('--summary <path>', 'with --to-topic: also write the summary JSON here (default: printed only)'))
    .addOption(new Option('--seed <n>', 'seed of sampling and rounding (overrides balance.seed)'))
    .addOption(new Option('--include-originals', 'write the originals too, a balanced copy (overrides sink.includeOriginals)'))
    .addOption(new Option('--provenance <where>', 'provenance in an added field or a sidecar file (overrides sink.provenance)').choices(['field', 'sidecar']))
    .addOption(new Option('--rate-cap', "apply the config's rateCap (a replay runs uncapped by default)"))
    .addHelpText(
      'after',
      '\nExamples:\n  $ raretide replay --config raretide.yaml --file history.avro --out balanced.avro\n' +
        '  $ raretide replay --config raretide.yaml --from-topic --start-time 2026-01-01T00:00:00Z --out balanced.avro\n' +
        '  $ raretide replay --config raretide.yaml --from-topic --to-topic --summary replay-summary.json\n',
    )
    .action(async (options: ReplayOptions, command: Command) => {
      const { input, output } = endpointsFrom(options);
      const seed = seedOption(options.seed);
      await runReplay(
        {
          configPath: options.config,
          input,
          output,
          ...(seed === undefined ? {} : { seed }),
          ...(options.includeOriginals === true ? { includeOriginals: true } : {}),
          ...(options.provenance === undefined ? {} : { provenance: options.provenance }),
          rateCap: options.rateCap === true,
          quiet: globalOptions(command).quiet,
        },
        { context, clock: { now: () => performance.now() } },
      );
    });
}

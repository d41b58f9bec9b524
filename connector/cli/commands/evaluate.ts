import { Option, type Command } from 'commander';
import { UsageError } from '../../../config/errors.js';
import { globalOptions, type CliContext } from '../cli-context.js';
import { runEvaluate, type EvaluateSource } from '../evaluate/run-evaluate.js';
import { configOption } from '../options.js';

interface EvaluateOptions {
  readonly config: string;
  readonly file?: string;
  readonly fromTopic?: boolean;
  readonly holdout?: string;
  readonly out?: string;
  readonly json?: string;
  readonly seed?: string;
  readonly holdoutShare?: string;
}

/** `raretide evaluate`: scores the model's synthetic records against baselines on real data, as an HTML and a JSON report. */
export function registerEvaluate(program: Command, context: CliContext): void {
  program
    .command('evaluate')
    .description('compare the VAE with no augmentation, duplication, SMOTE and a Gaussian copula on real records; write an HTML and a JSON report')
    .addOption(configOption())
    .addOption(new Option('-f, --file <in.avro>', 'Avro container file of real labelled records'))
    .addOption(new Option('--from-topic', "read the config's source.topic as it stands now (earliest to the end offsets taken at start)"))
    .addOption(new Option('--holdout <file.avro>', 'real records to score on; then every input record is for training (default: hold out a share of the input)'))
    .addOption(new Option('--holdout-share <share>', 'share of each class held out when no --holdout is given, between 0 and 1 (default: 0.25)'))
    .addOption(new Option('-o, --out <report.html>', 'HTML report (default: <input>-report.html beside the input file, or raretide-report.html)'))
    .addOption(new Option('--json <report.json>', 'JSON report (default: the HTML path with .json)'))
    .addOption(new Option('--seed <n>', 'seed of the split, the generators and the bootstrap (overrides balance.seed)'))
    .addHelpText(
      'after',
      '\nThe rare classes are the keys of balance.targets; k is balance.maxPerRecord and the temperature balance.temperature.\n' +
        'Synthetic records are only ever used for training: every score is measured on real held-out records.\n' +
        '\nExamples:\n  $ raretide evaluate --config raretide.yaml --file history.avro\n' +
        '  $ raretide evaluate --config raretide.yaml --file train.avro --holdout holdout.avro --out report.html --json report.json\n' +
        '  $ raretide evaluate --config raretide.yaml --from-topic --seed 7 --out sorter-report.html\n',
    )
    .action(async (options: EvaluateOptions, command: Command) => {
      const global = globalOptions(command);
      const seed = options.seed === undefined ? undefined : seedFrom(options.seed);
      const holdoutShare = options.holdoutShare === undefined ? undefined : shareFrom(options.holdoutShare);
      await runEvaluate(
        {
          configPath: options.config,
          source: sourceFrom(options),
          ...(options.holdout === undefined ? {} : { holdoutFile: options.holdout }),
          ...(options.out === undefined ? {} : { out: options.out }),
          ...(options.json === undefined ? {} : { json: options.json }),
          ...(seed === undefined ? {} : { seed }),
          ...(holdoutShare === undefined ? {} : { holdoutShare }),
          quiet: global.quiet,
          ...(global.logFormat === undefined ? {} : { logFormat: global.logFormat }),
        },
        { context, now: () => performance.now() },
      );
    });
}

function sourceFrom(options: EvaluateOptions): EvaluateSource {
  if (options.file !== undefined && options.fromTopic === true) throw new UsageError('evaluate reads one input: give --file <in.avro> or --from-topic, not both');
  if (options.file !== undefined) return { kind: 'file', path: options.file };
  if (options.fromTopic === true) return { kind: 'topic' };
  throw new UsageError("evaluate needs real records: --file <in.avro>, or --from-topic (the config's source.topic)");
}

function seedFrom(text: string): number {
  const seed = Number(text);
  if (!/^[0-9]+$/.test(text) || !Number.isSafeInteger(seed) || seed > 2 ** 32 - 1) {
    throw new UsageError(`--seed = ${JSON.stringify(text)}: expected a whole number from 0 to 4294967295, e.g. --seed 7`);
  }
  return seed;
}

function shareFrom(text: string): number {
  const share = Number(text);
  if (text.trim() === '' || !(share > 0 && share < 1)) {
    throw new UsageError(`--holdout-share = ${JSON.stringify(text)}: expected a share between 0 and 1 (exclusive), e.g. --holdout-share 0.25`);
  }
  return share;
}

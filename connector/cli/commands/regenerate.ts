import { Option, type Command } from 'commander';
import { UsageError } from '../../../config/errors.js';
import { globalOptions, type CliContext } from '../cli-context.js';
import { configOption } from '../options.js';
import { regenerateOne, type SingleRequest, type TagOrigin } from '../regenerate/regenerate-one.js';
import { openSession } from '../regenerate/regenerate-session.js';
import { openTopicSession } from '../regenerate/topic-source-record.js';
import { failOnMismatch, renderVerifySummary, verifyOutput } from '../regenerate/verify-output.js';
import { failOnTopicMismatch, renderTopicVerifySummary, verifyTopicOutput } from '../regenerate/verify-topic-output.js';

interface RegenerateOptions {
  readonly config: string;
  readonly file?: string;
  readonly fromTopic?: boolean;
  readonly out?: string;
  readonly outTopic?: string;
  readonly verify?: boolean;
  readonly record?: string;
  readonly tag?: string[];
  readonly tagJson?: string;
  readonly compare?: string;
  readonly modelDir?: string;
  readonly sourceName?: string;
}

/** `raretide regenerate`: makes synthetic records again from their provenance, one or a whole output. */
export function registerRegenerate(program: Command, context: CliContext): void {
  program
    .command('regenerate')
    .description('make a synthetic record again from its provenance tag and source record; --verify checks every synthetic record of a replay output')
    .addOption(configOption())
    .addOption(new Option('-f, --file <in.avro>', 'the Avro container file the replay read'))
    .addOption(new Option('--from-topic', "read the source record from the config's source.topic, at the tag's partition and offset"))
    .addOption(new Option('-o, --out <out.avro>', 'the replay output: checked whole with --verify, or its record --record <n>'))
    .addOption(new Option('--out-topic <topic>', 'with --from-topic --verify: the output topic to check (what replay --to-topic or run wrote)'))
    .addOption(new Option('--verify', 'regenerate every synthetic record of --out (or --out-topic) and compare the bytes'))
    .addOption(new Option('--record <n>', 'regenerate record n (from 0) of --out, reading its tag from the file'))
    .addOption(new Option('--tag <name=value>', 'one provenance header, e.g. raretide.sample=2 (repeat for each)').argParser(collect))
    .addOption(new Option('--tag-json <json>', 'the tag as a JSON object: provenance headers, or an output record\'s raretide_provenance'))
    .addOption(new Option('--compare <json>', 'a record (JSON) to compare the regenerated one with'))
    .addOption(new Option('--model-dir <dir>', 'the model directory that made the records (overrides model.dir)'))
    .addOption(new Option('--source-name <name>', "the input's name in the provenance, if the file was renamed since (default: its file name)"))
    .addHelpText(
      'after',
      '\nExamples:\n' +
        '  $ raretide regenerate --config raretide.yaml --file history.avro --out balanced.avro --verify\n' +
        '  $ raretide regenerate --config raretide.yaml --file history.avro --out balanced.avro --record 1234\n' +
        '  $ raretide regenerate --config raretide.yaml --file history.avro --tag raretide.kind=synthetic \\\n' +
        '      --tag raretide.source.topic=history.avro --tag raretide.source.partition=0 --tag raretide.source.offset=17 \\\n' +
        '      --tag raretide.model=9c1e5f0a7b3d2e64 --tag raretide.sample=2 --tag raretide.seed=1 --tag raretide.temperature=1\n' +
        '  $ raretide regenerate --config raretide.yaml --from-topic --out balanced.avro --record 1234\n' +
        '  $ raretide regenerate --config raretide.yaml --from-topic --verify --out-topic sorter.events.balanced\n',
    )
    .action(async (options: RegenerateOptions, command: Command) => {
      const { quiet } = globalOptions(command);
      const modelDir = options.modelDir === undefined ? {} : { modelDir: options.modelDir };
      if (options.fromTopic === true && options.verify === true) {
        await verifyTopic(options, context, quiet);
        return;
      }
      if (options.outTopic !== undefined) throw new UsageError('--out-topic names an output topic to check: use it with --from-topic --verify.');
      if (options.fromTopic === true) {
        if (options.file !== undefined || options.sourceName !== undefined) {
          throw new UsageError('--from-topic reads one source record from source.topic; leave out --file and --source-name (they are for a replay of a file).');
        }
        const tagOrigin = tagOriginOf(options);
        const session = await openTopicSession({ configPath: options.config, ...modelDir }, context);
        try {
          await regenerateOne(session, singleRequest(tagOrigin, options, quiet), context);
        } finally {
          await session.close();
        }
        return;
      }
      if (options.file === undefined) throw new UsageError('regenerate needs the input the replay read: --file <in.avro>, or --from-topic for a topic.');
      const tagOrigin = options.verify === true ? undefined : tagOriginOf(options);
      if (options.verify === true && options.out === undefined) throw new UsageError('--verify needs the replay output to check: --out <out.avro>.');
      if (options.verify === true && (options.record ?? options.tag ?? options.tagJson ?? options.compare) !== undefined) {
        throw new UsageError('--verify checks every record of --out; leave out --record, --tag, --tag-json and --compare.');
      }
      const session = await openSession(
        {
          configPath: options.config,
          input: options.file,
          ...modelDir,
          ...(options.sourceName === undefined ? {} : { sourceName: options.sourceName }),
        },
        context,
      );
      try {
        if (tagOrigin !== undefined) {
          await regenerateOne(session, singleRequest(tagOrigin, options, quiet), context);
          return;
        }
        const summary = await verifyOutput(
          session,
          { output: options.out!, input: options.file },
          { clock: { now: () => performance.now() }, ...(quiet ? {} : { progress: context.stderr }) },
        );
        if (!quiet || summary.mismatched > 0) context.stdout(renderVerifySummary(summary));
        failOnMismatch(summary);
      } finally {
        await session.close();
      }
    });
}

/** `--from-topic --verify --out-topic <topic>`: every synthetic record of an output topic. */
async function verifyTopic(options: RegenerateOptions, context: CliContext, quiet: boolean): Promise<void> {
  if (options.outTopic === undefined) {
    throw new UsageError('--from-topic --verify checks an output topic: add --out-topic <topic> (to check a file written from the topic, regenerate its records with --out <out.avro> --record <n>).');
  }
  const stray = ([['--file', options.file], ['--out', options.out], ['--record', options.record], ['--tag', options.tag], ['--tag-json', options.tagJson], ['--compare', options.compare], ['--source-name', options.sourceName]] as const)
    .filter(([, value]) => value !== undefined)
    .map(([flag]) => flag);
  if (stray.length > 0) throw new UsageError(`--from-topic --verify checks every record of --out-topic ${options.outTopic}; leave out ${stray.join(', ')}.`);
  const summary = await verifyTopicOutput(
    { configPath: options.config, outputTopic: options.outTopic, ...(options.modelDir === undefined ? {} : { modelDir: options.modelDir }) },
    context,
    { clock: { now: () => performance.now() }, ...(quiet ? {} : { progress: context.stderr }) },
  );
  if (!quiet || summary.mismatched > 0) context.stdout(renderTopicVerifySummary(summary));
  failOnTopicMismatch(summary);
}

function singleRequest(tag: TagOrigin, options: RegenerateOptions, quiet: boolean): SingleRequest {
  return { tag, ...(options.compare === undefined ? {} : { compare: options.compare }), quiet };
}

function collect(value: string, previous: string[] | undefined): string[] {
  return [...(previous ?? []), value];
}

/** Exactly one of: --tag flags, --tag-json, or --out with --record. */
function tagOriginOf(options: RegenerateOptions): TagOrigin {
  const given = [options.tag !== undefined, options.tagJson !== undefined, options.record !== undefined].filter(Boolean).length;
  if (given !== 1) {
    throw new UsageError('regenerate needs one tag: --tag name=value (repeated), --tag-json <json>, or --out <out.avro> --record <n>; or --verify with --out to check a whole output.');
  }
  if (options.tag !== undefined) return { kind: 'flags', flags: options.tag };
  if (options.tagJson !== undefined) return { kind: 'json', text: options.tagJson };
  if (options.out === undefined) throw new UsageError('--record <n> reads the tag from a replay output: add --out <out.avro>.');
  const record = Number(options.record);
  if (!/^[0-9]+$/.test(options.record!) || !Number.isSafeInteger(record)) throw new UsageError(`--record = ${JSON.stringify(options.record)}: expected a record index from 0, e.g. --record 12`);
  return { kind: 'output', path: options.out, record };
}

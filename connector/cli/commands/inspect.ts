import { Option, type Command } from 'commander';
import { UsageError } from '../../../config/errors.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import type { RaretideConfig } from '../../../config/schema.js';
import { FeatureCodec, renderFieldTable } from '../../../model/features/index.js';
import { readFileSample, type RecordSample } from '../../records/file-sample.js';
import { openTopicRecords } from '../../records/topic-records.js';
import type { CliContext } from '../cli-context.js';

interface InspectOptions {
  readonly file?: string;
  readonly schema?: string;
  readonly config?: string;
  readonly label?: string;
  readonly sample: string;
  readonly json?: boolean;
}

/** The label path and field policies the codec should use: flags first, then the config file. */
function codecOptions(options: InspectOptions, config: RaretideConfig | undefined): { labelPath?: string; policies?: Record<string, 'learn' | 'copy' | 'fresh' | 'null'> } {
  const fromConfig = config?.label?.from === 'field' ? config.label.path : undefined;
  const labelPath = options.label ?? fromConfig;
  return {
    ...(labelPath === undefined ? {} : { labelPath }),
    ...(config === undefined ? {} : { policies: config.fields }),
  };
}

function sampleSize(text: string): number {
  const size = Number(text);
  if (!Number.isInteger(size) || size < 1) {
    throw new UsageError(`--sample = ${JSON.stringify(text)}: expected a whole number of records ≥ 1, e.g. --sample 10000`);
  }
  return size;
}

/** The sample: from `--file`, else from the config's source topic (a snapshot read from the start). */
async function readSample(options: InspectOptions, config: RaretideConfig | undefined, limit: number): Promise<RecordSample> {
  if (options.file !== undefined) return readFileSample(options.file, limit, options.schema ?? config?.source?.readerSchemaFile);
  if (config?.source === undefined) {
    throw new UsageError('inspect needs a sample: pass --file <avro>, or --config with a source topic (and kafka) to read');
  }
  const { kafka, source } = requireSections(config, 'inspect', ['kafka', 'source']);
  const topic = await openTopicRecords(kafka, source, limit);
  const records: Record<string, unknown>[] = [];
  try {
    for await (const record of topic.records) records.push(record);
  } finally {
    await topic.close();
  }
  return { schema: topic.schema, records, origin: topic.origin };
}

/** `raretide inspect`: infers the feature codec from a sample and prints its field table for review. */
export function registerInspect(program: Command, context: CliContext): void {
  program
    .command('inspect')
    .description('read a sample of records and print how each field will be modelled (policy, encoding, summary)')
    .addOption(new Option('-f, --file <avro>', 'Avro container file to sample (default: source.topic of --config)'))
    .addOption(new Option('-s, --schema <avsc>', 'reader schema (.avsc); default: the file\'s own schema'))
    .addOption(new Option('-c, --config <file>', 'config file: label and field policies are taken from it'))
    .addOption(new Option('-l, --label <path>', 'dotted path of the class field (overrides the config)'))
    .addOption(new Option('-n, --sample <records>', 'records to read from the start').default('10000'))
    .addOption(new Option('--json', 'print the field table as JSON'))
    .addHelpText('after', '\nExample:\n  $ raretide inspect --file history.avro --label outcome\n  $ raretide inspect --config raretide.yaml --sample 50000\n')
    .action(async (options: InspectOptions) => {
      const config = options.config === undefined ? undefined : await loadConfigFile(options.config, { env: context.env });
      const sample = await readSample(options, config, sampleSize(options.sample));
      if (sample.records.length === 0) {
        throw new UsageError(`${sample.origin} holds no records; inspect needs a sample of at least one record.`);
      }
      const codec = FeatureCodec.fromSample(sample.schema.json as never, sample.records, codecOptions(options, config));
      const table = codec.describe();
      context.stdout(options.json === true ? `${JSON.stringify(table, null, 2)}\n` : renderFieldTable(table));
    });
}

import { stat } from 'node:fs/promises';
import { Option, type Command } from 'commander';
import { UsageError } from '../../../config/errors.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import type { LabelConfig, RaretideConfig } from '../../../config/schema.js';
import type { AvroRecord, AvroSchemaJson } from '../../../model/features/index.js';
import { fitModel, type FitResult } from '../../../model/fit.js';
import { saveModel } from '../../../model/vae/index.js';
import { ContainerFileReader } from '../../avro/container/container-reader.js';
import { loadSchemaFile } from '../../avro/known-schema.js';
import { openTopicRecords } from '../../records/topic-records.js';
import { globalOptions, type CliContext } from '../cli-context.js';
import { fitProgress, type ProgressStyle } from '../fit-progress.js';
import { configOption } from '../options.js';

interface FitCommandOptions {
  readonly config: string;
  readonly file?: string;
  readonly out?: string;
  readonly epochs?: string;
  readonly seed?: string;
  readonly overwrite?: boolean;
}

/** `raretide fit`: trains the model on an Avro container file and writes the model directory. */
export function registerFit(program: Command, context: CliContext): void {
  program
    .command('fit')
    .description('train the conditional VAE on real records and write the model directory')
    .addOption(configOption())
    .addOption(new Option('-f, --file <avro>', 'Avro container file of real records to train on (default: a snapshot of source.topic)'))
    .addOption(new Option('-o, --out <dir>', 'model directory to write (overrides model.dir)'))
    .addOption(new Option('--epochs <n>', 'most passes over the records (overrides training.epochs)'))
    .addOption(new Option('--seed <n>', 'training seed (overrides training.seed)'))
    .addOption(new Option('--overwrite', 'replace the model directory if it exists'))
    .addHelpText(
      'after',
      '\nCtrl-C stops after the current epoch and still writes the model, with the best weights so far.\n' +
        '\nExample:\n  $ raretide fit --config raretide.yaml --file history.avro --out models/sorter\n',
    )
    .action(async (options: FitCommandOptions, command: Command) => {
      const config = await loadConfigFile(options.config, { env: context.env });
      const labelPath = fieldLabelPath(requireSections(config, 'fit', ['label']).label);
      const directory = options.out ?? config.model?.dir;
      if (directory === undefined) {
        throw new UsageError('fit needs a model directory to write: set model.dir in the config or pass --out <dir>');
      }
      if (!options.overwrite && (await exists(directory))) {
        throw new UsageError(`model directory ${directory} already exists: pass --overwrite to replace it, or --out <dir> to write another`);
      }
      const training = {
        ...config.training,
        ...(options.epochs === undefined ? {} : { epochs: wholeNumber('--epochs', options.epochs, 1) }),
        ...(options.seed === undefined ? {} : { seed: wholeNumber('--seed', options.seed, 0) }),
      };
      const style = progressStyle(command, config, context);
      const note = (message: string) => writeNote(style, message, context);

      const source = await openSource(options.file, config);
      const interrupt = new AbortController();
      const onInterrupt = () => {
        note('interrupted: finishing this epoch, then writing the model with the best weights so far (Ctrl-C again quits at once)');
        interrupt.abort();
      };
      // `once`: a second Ctrl-C finds no listener and ends the process the usual way.
      process.once('SIGINT', onInterrupt);
      const progress = fitProgress(style, context.stderr);
      let fitted: FitResult | undefined;
      try {
        fitted = await fitModel(
          { schema: source.schema, records: source.records, labelPath, policies: config.fields, training },
          { onBackend: (_backend, message) => note(message), onEpoch: (report) => progress.epoch(report), signal: interrupt.signal },
        );
      } finally {
        progress.finish();
        process.removeListener('SIGINT', onInterrupt);
        source.close();
      }
      try {
        // Written under a temporary name and renamed: a Ctrl-C now leaves no half-written model.
        const id = await saveModel(directory, fitted.bundle, { overwrite: options.overwrite === true });
        const skipped = source.skipped();
        if (skipped.count > 0) note(`left out ${skipped.count} records that did not decode; first: ${skipped.firstReason}`);
        if (!globalOptions(command).quiet) context.stdout(summary(id, directory, source.origin, fitted));
      } finally {
        fitted.dispose();
      }
    });
}

/** Fit reads the class from a field of the record; header and key labels live outside it. */
function fieldLabelPath(label: LabelConfig): string {
  if (label.from === 'field') return label.path;
  throw new UsageError(
    `label.from = ${label.from}: fit needs the class inside the record for now; ` +
      `train on records that carry the class as a field and set label: {from: field, path: <field>}`,
  );
}

interface FitSource {
  readonly schema: AvroSchemaJson;
  readonly records: AsyncIterable<AvroRecord>;
  readonly origin: string;
  close(): void;
  /** Payloads that did not decode and were left out (a topic may hold some), known once read. */
  skipped(): { count: number; firstReason: string | undefined };
}

async function openSource(file: string | undefined, config: RaretideConfig): Promise<FitSource> {
  if (file === undefined) {
    if (config.source === undefined) throw new UsageError('fit needs records to train on: pass --file <avro> (an Avro container file) or configure source and kafka to read a topic');
    const { kafka, source } = requireSections(config, 'fit', ['kafka', 'source']);
    const topic = await openTopicRecords(kafka, source);
    return {
      schema: topic.schema.json as AvroSchemaJson,
      records: topic.records as AsyncIterable<AvroRecord>,
      origin: `${topic.origin} (snapshot: earliest to the end offsets at start)`,
      close: () => void topic.close(),
      skipped: () => topic.undecodable,
    };
  }
  const readerFile = config.source?.readerSchemaFile;
  const reader = readerFile === undefined ? undefined : await loadSchemaFile(readerFile);
  const container = await ContainerFileReader.open(file, reader === undefined ? {} : { reader });
  return {
    schema: (reader ?? container.header.writer).json as AvroSchemaJson,
    records: container as AsyncIterable<AvroRecord>,
    origin: file,
    close: () => container.close(),
    skipped: () => ({ count: 0, firstReason: undefined }),
  };
}

function progressStyle(command: Command, config: RaretideConfig, context: CliContext): ProgressStyle {
  const global = globalOptions(command);
  if (global.quiet) return { kind: 'quiet' };
  if (context.stderrColumns !== undefined) return { kind: 'terminal', columns: context.stderrColumns };
  return { kind: global.logFormat ?? config.log.format };
}

function writeNote(style: ProgressStyle, message: string, context: CliContext): void {
  if (style.kind === 'quiet') return;
  if (style.kind === 'json') context.stderr(`${JSON.stringify({ level: 'info', message })}\n`);
  // On a terminal the note replaces the progress line, which is redrawn below it at the next epoch.
  else context.stderr(style.kind === 'terminal' ? `\r\u001b[2K${message}\n` : `${message}\n`);
}

function summary(id: string, directory: string, origin: string, fitted: FitResult): string {
  const { records } = fitted;
  const { curve, bestEpoch, stoppedBy } = fitted.bundle.trained;
  const classes = Object.entries(records.perClass)
    .map(([name, count]) => `${name} ${count}`)
    .join(', ');
  const skipped = records.missingLabel + records.unknownLabel;
  const lines = [
    `model ${id} written to ${directory}`,
    `  ${records.trained} of ${records.read} records from ${origin} (schema ${fitted.schemaFingerprint}); classes: ${classes}`,
    `  ${curve.length} epochs (ended by ${stoppedBy}), best epoch ${bestEpoch}, on ${fitted.backend}`,
  ];
  if (skipped > 0) {
    lines.push(
      `  skipped ${records.missingLabel} records without a class and ${records.unknownLabel} of classes first seen after the codec's sample`,
    );
  }
  return `${lines.join('\n')}\n`;
}

function wholeNumber(flag: string, text: string, minimum: number): number {
  const value = Number(text);
  if (!/^\d+$/.test(text.trim()) || !Number.isSafeInteger(value) || value < minimum) {
    throw new UsageError(`${flag} = ${JSON.stringify(text)}: expected a whole number ≥ ${minimum}, e.g. ${flag} ${Math.max(minimum, 50)}`);
  }
  return value;
}

async function exists(path: string): Promise<boolean> {
  try {
    await stat(path);
    return true;
  } catch {
    return false;
  }
}

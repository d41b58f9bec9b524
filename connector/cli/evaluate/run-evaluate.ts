/**
 * `raretide evaluate` end to end: load the config and the model, read the real records (and a given
 * holdout) with the connector's label rule, run the evaluation, then write the HTML and JSON reports
 * together. Also what `raretide demo` calls for its report.
 */
import { stat } from 'node:fs/promises';
import { UsageError } from '../../../config/errors.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections, type ConfigWith } from '../../../config/requirements.js';
import { evaluateQuality } from '../../../model/quality/evaluate.js';
import type { EvaluationInput, EvaluationOptions, QualityReport } from '../../../model/quality/quality-report.js';
import { renderReportHtml } from '../../../model/quality/report/render-report.js';
import { loadTrainedModel, type TrainedModel } from '../../../model/trained-model.js';
import { knownSchema, loadSchemaFile, type KnownSchema } from '../../avro/known-schema.js';
import { labelReader, type LabelReader } from '../../pipeline/label.js';
import type { CliContext } from '../cli-context.js';
import type { ProgressStyle } from '../fit-progress.js';
import { evaluateProgress, type EvaluateProgress } from './evaluate-progress.js';
import { readLabelledFile, readLabelledTopic, type LabelledSet } from './labelled-records.js';
import { checkReportPaths, reportPaths, writeReportFiles } from './report-files.js';

/** Real records from an Avro container file, or from the config's `source.topic` as it stands now. */
export type EvaluateSource = { readonly kind: 'file'; readonly path: string } | { readonly kind: 'topic' };

export interface EvaluateRequest {
  readonly configPath: string;
  readonly source: EvaluateSource;
  /** A real holdout file; without it, a stratified share of the records is held out. */
  readonly holdoutFile?: string;
  /** HTML report path (default: beside the input file, else `raretide-report.html`). */
  readonly out?: string;
  /** JSON report path (default: the HTML path with `.json`). */
  readonly json?: string;
  /** Overrides `balance.seed`. */
  readonly seed?: number;
  /** Share of each class held out when no holdout file is given (evaluateQuality's default when absent). */
  readonly holdoutShare?: number;
  /** Bootstrap resamples for the intervals (evaluateQuality's default when absent). */
  readonly bootstrapResamples?: number;
  readonly quiet: boolean;
  /** Progress as text or JSON lines when not on a terminal; default: the config's `log.format`. */
  readonly logFormat?: 'json' | 'text';
}

export type Evaluate = (input: EvaluationInput, options: EvaluationOptions) => Promise<QualityReport>;

export interface EvaluateEffects {
  readonly context: CliContext;
  /** Monotonic ms clock for the timings. @default performance.now */
  readonly now?: () => number;
  /** The evaluation itself. @default evaluateQuality */
  readonly evaluate?: Evaluate;
}

export async function runEvaluate(request: EvaluateRequest, effects: EvaluateEffects): Promise<QualityReport> {
  const { context } = effects;
  const config = requireSections(await loadConfigFile(request.configPath, { env: context.env }), 'evaluate', ['label', 'balance', 'model']);
  checkHoldoutOptions(request);
  if (request.source.kind === 'file' && config.label.from !== 'field') {
    throw new UsageError(`label.from is ${config.label.from}, but records of an Avro file have no ${config.label.from === 'key' ? 'keys' : 'headers'}; evaluate a topic (--from-topic) or label by a field (label.from: field)`);
  }
  const inputFile = request.source.kind === 'file' ? request.source.path : undefined;
  const paths = reportPaths({ ...(request.out === undefined ? {} : { out: request.out }), ...(request.json === undefined ? {} : { json: request.json }), ...(inputFile === undefined ? {} : { inputFile }) });
  await checkReportPaths(paths, [inputFile, request.holdoutFile].filter((path): path is string => path !== undefined));

  if ((await stat(config.model.dir).catch(() => undefined))?.isDirectory() !== true) {
    throw new UsageError(`model.dir ${config.model.dir} is not a directory: train a model there with \`raretide fit\`, or point model.dir at one`);
  }
  const progress = evaluateProgress(progressStyle(request, config, context), context.stderr);
  const model = await loadTrainedModel(config.model.dir);
  try {
    const rareClasses = rareClassesOf(config, model);
    const reader = await readerSchema(config.source?.readerSchemaFile, model);
    const label = labelReader(config.label, model.classNames);
    progress.update('reading records', 0);
    const real = await readSource(request.source, config, reader, label);
    const holdout = request.holdoutFile === undefined ? undefined : await readLabelledFile(request.holdoutFile, reader, label);
    for (const set of holdout === undefined ? [real] : [real, holdout]) reportSkipped(set, progress);

    const evaluate = effects.evaluate ?? evaluateQuality;
    const report = await evaluate(
      {
        records: real.records,
        ...(holdout === undefined ? {} : { holdout: holdout.records }),
        sourceDescription: real.origin,
        model,
        rareClasses,
      },
      {
        seed: request.seed ?? config.balance.seed,
        k: config.balance.maxPerRecord,
        temperature: config.balance.temperature,
        ...(request.holdoutShare === undefined ? {} : { holdoutShare: request.holdoutShare }),
        ...(request.bootstrapResamples === undefined ? {} : { bootstrapResamples: request.bootstrapResamples }),
        onProgress: (stage, done) => progress.update(stage, done),
        ...(effects.now === undefined ? {} : { now: effects.now }),
      },
    );
    progress.update('writing the report', 0);
    await writeReportFiles(paths, await renderReportHtml(report), `${JSON.stringify(report, null, 2)}\n`);
    progress.finish();
    if (!request.quiet) context.stdout(`report written to ${paths.html} (HTML) and ${paths.json} (JSON)\nverdict: ${report.verdict.headline}\n`);
    return report;
  } finally {
    progress.finish();
    model.dispose();
  }
}

function checkHoldoutOptions(request: EvaluateRequest): void {
  if (request.holdoutFile !== undefined && request.holdoutShare !== undefined) {
    throw new UsageError('--holdout-share splits the input when no holdout is given; with --holdout <file> every input record is train, so drop one of the two');
  }
}

/** The balance targets are the classes to oversample; each must be one the model was fitted on. */
function rareClassesOf(config: ConfigWith<'balance'>, model: TrainedModel): string[] {
  const rareClasses = Object.keys(config.balance.targets);
  const unknown = rareClasses.filter((className) => !model.classNames.includes(className));
  if (unknown.length > 0) {
    throw new UsageError(
      `balance.targets names ${unknown.map((name) => JSON.stringify(name)).join(', ')}, which model ${model.id} was not fitted on ` +
        `(its classes: ${model.classNames.join(', ')}); fix balance.targets, or refit the model on records of those classes`,
    );
  }
  return rareClasses;
}

/** Records are read as the configured reader schema, which must be the model's, else as the model's schema. */
async function readerSchema(readerSchemaFile: string | undefined, model: TrainedModel): Promise<KnownSchema> {
  const reader = readerSchemaFile === undefined ? knownSchema(model.schema, `the schema of model ${model.id}`) : await loadSchemaFile(readerSchemaFile);
  model.checkSchema(reader.fingerprint.hex, reader.source);
  return reader;
}

async function readSource(source: EvaluateSource, config: ConfigWith<'label'>, reader: KnownSchema, label: LabelReader): Promise<LabelledSet> {
  if (source.kind === 'file') return readLabelledFile(source.path, reader, label);
  const { kafka, source: topic } = requireSections(config, 'evaluate --from-topic', ['kafka', 'source']);
  return readLabelledTopic(kafka, topic, reader, label);
}

function reportSkipped(set: LabelledSet, progress: EvaluateProgress): void {
  if (set.records.length === 0) {
    throw new UsageError(`${set.origin} holds no records with a class${set.skipped.firstReason === undefined ? '' : ` (first left out: ${set.skipped.firstReason})`}; evaluate needs real labelled records`);
  }
  if (set.skipped.count > 0) progress.note(`left out ${set.skipped.count} records of ${set.origin} (no class the model knows, or not decodable); first: ${set.skipped.firstReason}`);
}

function progressStyle(request: EvaluateRequest, config: ConfigWith<'label'>, context: CliContext): ProgressStyle {
  if (request.quiet) return { kind: 'quiet' };
  if (context.stderrColumns !== undefined) return { kind: 'terminal', columns: context.stderrColumns };
  return { kind: request.logFormat ?? config.log.format };
}

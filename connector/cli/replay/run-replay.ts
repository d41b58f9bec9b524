/**
 * `raretide replay` end to end: load the model and config, open the input and output, run the shared
 * pipeline (cumulative counts, rate cap only when asked), then close the output and write the summary.
 * On any failure the output is aborted, so no partial file is left under the output's name (a topic
 * output keeps the batches delivered before the failure). A failed checkpoint ends the replay: the
 * input cannot rewind to the last checkpoint, so there is nothing to resume from.
 */
import { rename, writeFile } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { RaretideError, UsageError } from '../../../config/errors.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import { knownSchema, loadSchemaFile, type KnownSchema } from '../../avro/known-schema.js';
import { PayloadDecoder } from '../../avro/payload-decoder.js';
import type { FileProvenance } from '../../files/container-sink.js';
import { assemblePipeline } from '../../pipeline/assemble.js';
import { ModelSynthesizer } from '../../pipeline/model-synthesizer.js';
import { originalsPassUnchanged } from '../../pipeline/original-bytes.js';
import type { Clock } from '../../pipeline/rate-limit.js';
import { PipelineRunner } from '../../pipeline/runner.js';
import type { CliContext } from '../cli-context.js';
import { ProgressLine } from './progress-line.js';
import { openInput, openOutput, type OpenedInput, type OpenedOutput, type ReplayInput, type ReplayOutput } from './replay-endpoints.js';
import { buildReplaySummary, renderReplaySummary, type ReplaySummary } from './replay-summary.js';

export interface ReplayRequest {
  readonly configPath: string;
  readonly input: ReplayInput;
  readonly output: ReplayOutput;
  /** Overrides `balance.seed`. */
  readonly seed?: number;
  /** Overrides `sink.includeOriginals`. */
  readonly includeOriginals?: boolean;
  /** Overrides `sink.provenance`. */
  readonly provenance?: FileProvenance;
  /** Apply the config's `rateCap` (off by default in a replay). */
  readonly rateCap: boolean;
  readonly quiet: boolean;
}

/** Effects a replay needs besides files: the CLI context, a clock, and a sleep for the rate cap. */
export interface ReplayEffects {
  readonly context: CliContext;
  readonly clock: Clock;
  readonly sleep?: (ms: number) => Promise<void>;
}

export async function runReplay(request: ReplayRequest, effects: ReplayEffects): Promise<ReplaySummary> {
  const { context, clock } = effects;
  const started = clock.now();
  const config = requireSections(await loadConfigFile(request.configPath, { env: context.env }), 'replay', ['label', 'balance', 'model']);
  const rateCap = request.rateCap ? config.rateCap : undefined;
  if (request.rateCap && rateCap === undefined) throw new UsageError('--rate-cap asks for the config\'s rateCap section, and the config has none; add rateCap or drop the flag.');
  const seed = request.seed ?? config.balance.seed;
  const includeOriginals = request.includeOriginals ?? config.sink?.includeOriginals ?? false;
  const provenance = request.provenance ?? config.sink?.provenance ?? 'field';

  const synthesizer = await ModelSynthesizer.load(config.model.dir, config.model.privacyGuard);
  let input: OpenedInput | undefined;
  let output: OpenedOutput | undefined;
  try {
    const reader = await readerSchema(config.source?.readerSchemaFile, synthesizer);
    input = await openInput(request.input, reader, config);
    if (input.labelFromFieldOnly && config.label.from !== 'field') {
      throw new UsageError(`label.from is ${config.label.from}, but records of ${input.name} have no ${config.label.from === 'key' ? 'keys' : 'headers'}; label them by a field (label.from: field).`);
    }
    output = await openOutput(request.output, request.input, { recordSchema: reader, provenance, seed, modelId: synthesizer.modelId }, input.fileCodec, config);
    const balanceConfig = { ...config.balance, seed, counting: { mode: 'cumulative' as const } };
    const pipeline = assemblePipeline({
      label: config.label,
      balance: balanceConfig,
      includeOriginals,
      originalsAsRead: originalsPassUnchanged(input.framing, output.framing, reader),
      decoder: new PayloadDecoder(input.framing, { reader }),
      outputFraming: output.framing,
      synthesizer,
      ...(rateCap === undefined ? {} : { rateCap }),
      clock,
    });
    const progress = new ProgressLine(context.stderr, clock);
    const opened = input;
    const runner = new PipelineRunner({
      source: input.source,
      sink: output.sink,
      core: pipeline.core,
      balance: pipeline.balance,
      batchSize: config.delivery.batchSize,
      ...(pipeline.rateWait === undefined ? {} : { rateWait: pipeline.rateWait }),
      ...(effects.sleep === undefined ? {} : { sleep: effects.sleep }),
      onBatch: () => {
        if (!request.quiet) progress.update(runner.counters, opened.progress());
      },
    });
    await runner.run().catch((error: unknown) => {
      throw unresumable(error, opened.name);
    });
    await output.sink.close();
    await input.source.close();
    const summary = buildReplaySummary({
      input: input.name,
      output: output.name,
      sidecars: output.sidecars,
      model: { id: synthesizer.modelId, directory: config.model.dir },
      seed,
      temperature: balanceConfig.temperature,
      maxPerRecord: balanceConfig.maxPerRecord,
      includeOriginals,
      provenance,
      counters: runner.counters,
      shares: pipeline.balance.shares(),
      elapsedMs: clock.now() - started,
    });
    if (output.summaryPath !== undefined) await writeJsonFile(output.summaryPath, summary);
    if (!request.quiet) context.stdout(renderReplaySummary(summary));
    return summary;
  } catch (error) {
    // The first failure is the one to report; a failing clean-up must not hide it.
    await output?.discard().catch(() => undefined);
    await input?.source.close();
    throw error;
  } finally {
    synthesizer.dispose();
  }
}

/** The runner asks for a resume from the last checkpoint after a failed one; a replay cannot rewind its input. */
function unresumable(error: unknown, inputName: string): unknown {
  if (!(error instanceof RaretideError) || error.code !== 'pipeline.checkpoint-failed') return error;
  return new RaretideError(
    'replay.checkpoint-failed',
    `${error.message.replace(/ Resume from .*$/, '')} A replay cannot rewind ${inputName} to its last checkpoint, so it stops here; fix the cause and run the replay again into a fresh output.`,
    { retriable: false, cause: error },
  );
}

/** Records are read as the configured reader schema, else as the schema the model was fitted on. */
export async function readerSchema(readerSchemaFile: string | undefined, synthesizer: ModelSynthesizer): Promise<KnownSchema> {
  const { model } = synthesizer;
  const reader = readerSchemaFile === undefined ? knownSchema(model.schema, `the schema of model ${model.id}`) : await loadSchemaFile(readerSchemaFile);
  model.checkSchema(reader.fingerprint.hex, reader.source);
  return reader;
}

async function writeJsonFile(path: string, value: unknown): Promise<void> {
  const temp = join(dirname(path), `.${basename(path)}.tmp`);
  await writeFile(temp, `${JSON.stringify(value, null, 2)}\n`);
  await rename(temp, path);
}

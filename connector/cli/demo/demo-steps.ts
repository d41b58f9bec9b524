/**
 * The two steps both demos start with, printed the same way: generate the scenario's files, then fit
 * the model on the history.
 */
import type { CliContext } from '../cli-context.js';
import type { ProgressStyle } from '../fit-progress.js';
import type { DemoConfigSettings } from './demo-config.js';
import type { DemoPaths } from './demo-directory.js';
import { count, percent, type DemoOutput } from './demo-output.js';
import { fitDemoModel, type FittedDemoModel } from './fit-step.js';
import { PUMP_CONDITIONS, type PumpCondition } from './pump-station-schema.js';
import { HOLDOUT_SHARE, writeScenarioFiles, type GeneratedFiles } from './scenario-files.js';

/** What the demo's config takes from its command line (paths and seed come from the rest of the request). */
export type DemoConfigChoices = Pick<DemoConfigSettings, 'brokers' | 'topics' | 'epochs' | 'metricsPort'>;

export interface StepContext {
  readonly out: DemoOutput;
  readonly context: CliContext;
  readonly quiet: boolean;
  readonly paths: DemoPaths;
}

export async function generateStep(step: number, { out, paths }: StepContext, records: number, seed: number, config: DemoConfigChoices): Promise<GeneratedFiles> {
  const holdout = Math.round(records * HOLDOUT_SHARE);
  out.begin(step, 'generate', `${count(records)} readings, seed ${seed}: ${count(records - holdout)} of history to learn from, the ${count(holdout)} after them held out to score on`);
  const generated = await writeScenarioFiles(paths, records, seed, { ...config, schemaFile: paths.schema, modelDir: paths.model, seed });
  out.done(classShares(generated.history), [`${paths.history}, ${paths.holdout}`, `config ${paths.config} (schema ${paths.schema})`]);
  return generated;
}

export async function fitStep(step: number, { out, paths, context, quiet }: StepContext, epochs: number, signal?: AbortSignal): Promise<FittedDemoModel> {
  out.begin(step, 'fit', `a conditional VAE of the history, at most ${epochs} epochs`);
  const model = await fitDemoModel(paths.config, paths.history, progressStyle(quiet, context), context, signal);
  out.done(`model ${model.id} (${model.epochs} epochs, best ${model.bestEpoch}, on ${model.backend})`, [paths.model]);
  return model;
}

/** Progress on standard error: redrawn on a terminal, a line now and then elsewhere, none when quiet. */
export function progressStyle(quiet: boolean, context: CliContext): ProgressStyle {
  if (quiet) return { kind: 'quiet' };
  return context.stderrColumns === undefined ? { kind: 'text' } : { kind: 'terminal', columns: context.stderrColumns };
}

function classShares(perClass: Readonly<Record<PumpCondition, number>>): string {
  const total = PUMP_CONDITIONS.reduce((sum, condition) => sum + perClass[condition], 0);
  return PUMP_CONDITIONS.map((condition) => `${condition} ${percent(perClass[condition] / Math.max(1, total))}`).join(', ');
}

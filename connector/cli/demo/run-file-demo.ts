/**
 * `raretide demo` without a broker: the whole job on the invented pump-station scenario, each step
 * through the same code as its own command — generate the readings, `fit` a model of the history,
 * `replay` the history into a balanced Avro file, `evaluate` the synthetic readings against baselines on
 * the held-out real readings — printing each step's time, figures and artefacts.
 */
import type { QualityReport } from '../../../model/quality/quality-report.js';
import type { CliContext } from '../cli-context.js';
import { runEvaluate } from '../evaluate/run-evaluate.js';
import { duration } from '../replay/progress-line.js';
import type { ReplaySummary } from '../replay/replay-summary.js';
import { runReplay } from '../replay/run-replay.js';
import { demoPaths, prepareDemoDirectory, type DemoPaths } from './demo-directory.js';
import { count, DemoOutput, percent } from './demo-output.js';
import { fitStep, generateStep, type DemoConfigChoices, type StepContext } from './demo-steps.js';
import { evaluationLines } from './evaluation-lines.js';
import type { FittedDemoModel } from './fit-step.js';
import { whatNext } from './what-next.js';

export interface FileDemoRequest {
  readonly dir: string;
  /** Readings to generate, history and holdout together. */
  readonly records: number;
  readonly seed: number;
  readonly config: DemoConfigChoices;
  readonly quiet: boolean;
}

export interface DemoEffects {
  readonly context: CliContext;
  /** Monotonic milliseconds, for the step times. */
  readonly now: () => number;
}

export interface FileDemoResult {
  readonly paths: DemoPaths;
  readonly model: FittedDemoModel;
  readonly replay: ReplaySummary;
  readonly report: QualityReport;
  /** Wall time per step (generate, fit, replay, evaluate), ms. */
  readonly stepMs: Readonly<Record<string, number>>;
  readonly elapsedMs: number;
}

export async function runFileDemo(request: FileDemoRequest, effects: DemoEffects): Promise<FileDemoResult> {
  const { context, now } = effects;
  const started = now();
  const paths = demoPaths(request.dir);
  const out = new DemoOutput(context.stdout, request.quiet, now, 4);
  const steps: StepContext = { out, context, quiet: request.quiet, paths };
  out.line(`raretide demo: INVENTED pump-station telemetry (not real data), written to ${paths.dir}/ (delete it when done)`);
  await prepareDemoDirectory(paths);

  await generateStep(1, steps, request.records, request.seed, request.config);
  const model = await fitStep(2, steps, request.config.epochs);

  out.begin(3, 'replay', 'the history through the pipeline into a balanced copy (originals + synthetic readings)');
  const replay = await runReplay(
    { configPath: paths.config, input: { kind: 'file', path: paths.history }, output: { kind: 'file', path: paths.balanced }, includeOriginals: true, rateCap: false, quiet: true },
    { context, clock: { now } },
  );
  out.done(`${count(replay.records.read)} readings + ${count(replay.records.synthetic)} synthetic; share of the stream before → after (target):`, [
    `  ${replayShares(replay)}`,
    `${paths.balanced} (summary ${paths.summary})`,
  ]);

  out.begin(4, 'evaluate', 'classifiers trained with and without synthetic readings, scored on the held-out real readings');
  const report = await runEvaluate(
    { configPath: paths.config, source: { kind: 'file', path: paths.history }, holdoutFile: paths.holdout, out: paths.reportHtml, json: paths.reportJson, quiet: request.quiet, logFormat: 'text' },
    // The demo prints its own lines from the report; evaluate's progress still goes to standard error.
    { context: { ...context, stdout: () => undefined }, now },
  );
  out.done(report.verdict.headline, [...evaluationLines(report), `${paths.reportHtml}, ${paths.reportJson}`]);

  const elapsedMs = now() - started;
  out.line(`all done in ${duration(elapsedMs)}.`);
  out.line();
  for (const line of whatNext({ paths })) out.line(line);
  return { paths, model, replay, report, stepMs: out.stepMs, elapsedMs };
}

function replayShares(summary: ReplaySummary): string {
  return summary.classes
    .filter((entry) => entry.target !== null)
    .sort((a, b) => b.target! - a.target!)
    .map((entry) => `${entry.label} ${percent(entry.before.share)} → ${percent(entry.after.share)} (${percent(entry.target!)})`)
    .join(', ');
}

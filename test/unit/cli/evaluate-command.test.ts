import { mkdtemp, readdir, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import { ContainerFileWriter } from '../../../connector/avro/container/container-writer.js';
import type { CliContext } from '../../../connector/cli/cli-context.js';
import { registerEvaluate } from '../../../connector/cli/commands/evaluate.js';
import { reportPaths } from '../../../connector/cli/evaluate/report-files.js';
import { runEvaluate, type Evaluate, type EvaluateRequest } from '../../../connector/cli/evaluate/run-evaluate.js';
import { EXIT_OK, EXIT_USAGE, runCli } from '../../../connector/cli/program.js';
import { fitModel } from '../../../model/fit.js';
import type { EvaluationInput, EvaluationOptions, QualityReport } from '../../../model/quality/quality-report.js';
import { saveModel } from '../../../model/vae/index.js';
import { seattleWeatherRows, seattleWeatherSchema } from '../../support/open-data/seattle-weather.js';
import { writeSeattleWeatherFile } from '../../support/open-data/weather-file.js';
import { fixtureReport } from '../quality/report-fixture.js';

interface Run {
  readonly code: number;
  readonly stdout: string;
  readonly stderr: string;
}

function capture(columns?: number): { context: CliContext; out: () => Run } {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: {}, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text), ...(columns === undefined ? {} : { stderrColumns: columns }) };
  return { context, out: () => ({ code: EXIT_OK, stdout, stderr }) };
}

async function evaluate(args: readonly string[]): Promise<Run> {
  const { context, out } = capture();
  const code = await runCli(['node', 'raretide', 'evaluate', ...args], [registerEvaluate], context);
  return { ...out(), code };
}

/** Stands in for evaluateQuality where a test checks the command, not the numbers: records what it got. */
function recordingEvaluator(): { evaluate: Evaluate; calls: { input: EvaluationInput; options: EvaluationOptions }[] } {
  const calls: { input: EvaluationInput; options: EvaluationOptions }[] = [];
  return {
    calls,
    evaluate: async (input, options) => {
      calls.push({ input, options });
      for (const stage of ['split', 'generate vae', 'plots']) options.onProgress?.(stage, 0.5);
      return fixtureReport();
    },
  };
}

let workspace = '';
let weatherFile = '';
let modelDir = '';
let config = '';
beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-evaluate-'));
  // Open data: NOAA Seattle daily weather via vega-datasets (snow: 26 of 1,461 days).
  weatherFile = await writeSeattleWeatherFile(workspace);
  // The model never sees fog, so the 101 fog days are records of a class it does not know.
  const fitted = await fitModel({
    schema: seattleWeatherSchema as never,
    records: seattleWeatherRows().filter((row) => row.weather !== 'fog') as never,
    labelPath: 'weather',
    training: { hidden: [16], latent: 2, epochs: 3, batchSize: 256, seed: 5 },
  });
  modelDir = join(workspace, 'model');
  await saveModel(modelDir, fitted.bundle);
  fitted.dispose();
  config = await writeConfig('evaluate.yaml', 'balance: {targets: {snow: 0.05}, maxPerRecord: 3, temperature: 0.8, seed: 11}\n');
}, 60_000);
afterAll(async () => rm(workspace, { recursive: true, force: true }));

async function writeConfig(name: string, extra: string, label = 'label: {from: field, path: weather}\n'): Promise<string> {
  const path = join(workspace, name);
  await writeFile(path, `${label}model: {dir: ${modelDir}}\nlog: {format: text}\n${extra}`);
  return path;
}

async function leftovers(directory: string): Promise<string[]> {
  return (await readdir(directory)).filter((name) => name.endsWith('.tmp'));
}

describe('raretide evaluate', () => {
  it('scores a file against the baselines and writes the HTML and JSON beside it', async () => {
    const result = await evaluate(['--config', config, '--file', weatherFile, '--seed', '3']);
    expect(result.code, result.stderr).toBe(EXIT_OK);
    const html = join(workspace, 'seattle-weather-report.html');
    const json = join(workspace, 'seattle-weather-report.json');
    expect(result.stdout).toContain(`report written to ${html} (HTML) and ${json} (JSON)\nverdict: `);
    const report = JSON.parse(await readFile(json, 'utf8')) as QualityReport;
    expect(report.format).toBe('raretide.quality-report');
    expect(report.input).toMatchObject({ source: weatherFile, rareClasses: ['snow'], k: 3, temperature: 0.8, seed: 3, labelPath: 'weather' });
    // 1,461 days less the 101 fog days the model does not know (counts from the CSV).
    expect(Object.values(report.input.train).reduce((a, b) => a + b, 0) + Object.values(report.input.holdout).reduce((a, b) => a + b, 0)).toBe(1360);
    expect(report.input.train.fog).toBeUndefined();
    expect(report.generators.map((generator) => generator.generator)).toEqual(['none', 'duplication', 'smote', 'gaussian-copula', 'vae']);
    expect(result.stdout).toContain(`verdict: ${report.verdict.headline}\n`);
    expect(result.stderr).toMatch(/^left out 101 records of .*seattle-weather\.avro \(no class the model knows, or not decodable\); first: record \d+: .*fog/m);
    expect(result.stderr).toMatch(/^evaluate: split$/m);
    expect(result.stderr).toMatch(/^evaluate: fidelity vae$/m);
    const page = await readFile(html, 'utf8');
    expect(page).toMatch(/^<!DOCTYPE html>/);
    // The HTML renders the JSON's numbers: one distribution plot per field the evaluation binned.
    expect(report.plots.distributions.snow!.length).toBeGreaterThan(0);
    expect(page.match(/data-plot="distribution"/g)).toHaveLength(report.plots.distributions.snow!.length);
    expect(await leftovers(workspace)).toEqual([]);
  });

  it('passes a given holdout, the seed, k and the temperature to the evaluation, and writes where asked', async () => {
    const holdoutFile = join(workspace, 'holdout.avro');
    const writer = await ContainerFileWriter.create(holdoutFile, { schema: knownSchema(seattleWeatherSchema, 'seattle-weather') });
    for (const row of seattleWeatherRows().slice(0, 200)) await writer.append(row);
    await writer.close();
    const recorder = recordingEvaluator();
    const { context, out } = capture();
    const out1 = join(workspace, 'given.html');
    const report = await runEvaluate(
      { configPath: config, source: { kind: 'file', path: weatherFile }, holdoutFile, out: out1, json: join(workspace, 'given-numbers.json'), quiet: false },
      { context, evaluate: recorder.evaluate },
    );
    expect(report.verdict.headline).toBe(fixtureReport().verdict.headline);
    const [{ input, options }] = recorder.calls as [{ input: EvaluationInput; options: EvaluationOptions }];
    expect(input.records).toHaveLength(1360);
    expect(input.holdout?.length).toBe(200 - seattleWeatherRows().slice(0, 200).filter((row) => row.weather === 'fog').length);
    expect(input.rareClasses).toEqual(['snow']);
    expect(input.records.filter((record) => record.className === 'snow')).toHaveLength(26);
    expect(options).toMatchObject({ seed: 11, k: 3, temperature: 0.8 });
    expect(options.holdoutShare).toBeUndefined();
    expect(out().stdout).toContain(`report written to ${out1} (HTML) and ${join(workspace, 'given-numbers.json')} (JSON)`);
    expect((await stat(out1)).size).toBeGreaterThan(10_000);
  });

  it('redraws one progress line on a terminal, logs JSON lines when asked, and is silent with --quiet', async () => {
    const request: EvaluateRequest = { configPath: config, source: { kind: 'file', path: weatherFile }, out: join(workspace, 'progress.html'), holdoutShare: 0.3, quiet: false };
    const terminal = capture(60);
    const recorder = recordingEvaluator();
    await runEvaluate(request, { context: terminal.context, evaluate: recorder.evaluate });
    expect(recorder.calls[0]!.options.holdoutShare).toBe(0.3);
    const pieces = terminal.out().stderr.split('\r\u001b[2K');
    expect(pieces.some((piece) => piece.startsWith('[##########..........] generate vae 50 %'))).toBe(true);
    // A redrawn bar must not wrap: it is cut to the terminal's width less one.
    const bars = pieces.filter((piece) => piece.startsWith('['));
    expect(bars.length).toBeGreaterThan(3);
    expect(bars.every((piece) => piece.split('\n')[0]!.length <= 59)).toBe(true);

    const json = capture();
    await runEvaluate({ ...request, logFormat: 'json' }, { context: json.context, evaluate: recordingEvaluator().evaluate });
    const lines = json.out().stderr.trim().split('\n').map((line) => JSON.parse(line) as { level: string; message: string; stage?: string });
    expect(lines.filter((line) => line.message === 'evaluate stage').map((line) => line.stage)).toEqual(['reading records', 'split', 'generate vae', 'plots', 'writing the report']);

    const quiet = capture(80);
    await runEvaluate({ ...request, quiet: true }, { context: quiet.context, evaluate: recordingEvaluator().evaluate });
    expect(quiet.out()).toMatchObject({ stdout: '', stderr: '' });
  });

  it('leaves no report and no temporary file when the evaluation fails', async () => {
    const out1 = join(workspace, 'failed.html');
    const { context } = capture();
    const failure = await runEvaluate(
      { configPath: config, source: { kind: 'file', path: weatherFile }, out: out1, quiet: true },
      {
        context,
        evaluate: async () => {
          throw new Error('boom');
        },
      },
    ).then(
      () => undefined,
      (error: unknown) => error as Error,
    );
    expect(failure?.message).toBe('boom');
    await expect(stat(out1)).rejects.toThrow();
    await expect(stat(join(workspace, 'failed.json'))).rejects.toThrow();
    expect(await leftovers(workspace)).toEqual([]);
  });

  it('refuses wrong usage with exit code 2, naming what is wrong and the fix', async () => {
    const cases: [readonly string[], RegExp][] = [
      [['--config', config], /needs real records: --file <in\.avro>, or --from-topic/],
      [['--config', config, '--file', weatherFile, '--from-topic'], /one input: give --file <in\.avro> or --from-topic, not both/],
      [['--config', config, '--file', weatherFile, '--seed', '-1'], /--seed = "-1": expected a whole number/],
      [['--config', config, '--file', weatherFile, '--holdout-share', '1'], /--holdout-share = "1": expected a share between 0 and 1/],
      [['--config', config, '--file', weatherFile, '--holdout', weatherFile, '--holdout-share', '0.2'], /with --holdout <file> every input record is train/],
      [['--config', config, '--file', weatherFile, '--out', join(workspace, 'missing', 'r.html')], /directory .*missing does not exist; create it/],
      [['--config', config, '--file', weatherFile, '--out', weatherFile], /--out .*seattle-weather\.avro is an input file/],
      [['--config', config, '--file', weatherFile, '--out', join(workspace, 'same.html'), '--json', join(workspace, 'same.html')], /would both be written to/],
    ];
    for (const [args, message] of cases) {
      const result = await evaluate(args);
      expect(result.code, args.join(' ')).toBe(EXIT_USAGE);
      expect(result.stderr).toMatch(message);
    }
  });

  it('refuses a config without the sections it needs, a rare class the model lacks, and a label the file cannot carry', async () => {
    const noBalance = await writeConfig('no-balance.yaml', '');
    const missing = await evaluate(['--config', noBalance, '--file', weatherFile]);
    expect(missing.code).toBe(EXIT_USAGE);
    expect(missing.stderr).toMatch(/balance is missing: `raretide evaluate` needs a balance section/);

    const fogTarget = await writeConfig('fog.yaml', 'balance: {targets: {fog: 0.05, snow: 0.05}}\n');
    const fog = await evaluate(['--config', fogTarget, '--file', weatherFile]);
    expect(fog.code).toBe(EXIT_USAGE);
    expect(fog.stderr).toMatch(/balance\.targets names "fog", which model [0-9a-f]+ was not fitted on \(its classes: .*\); fix balance\.targets, or refit/);

    const header = await writeConfig('header.yaml', 'balance: {targets: {snow: 0.05}}\n', 'label: {from: header, name: kind}\n');
    const headerRun = await evaluate(['--config', header, '--file', weatherFile]);
    expect(headerRun.code).toBe(EXIT_USAGE);
    expect(headerRun.stderr).toMatch(/label\.from is header, but records of an Avro file have no headers/);
  });

  it('refuses records of another schema than the model was fitted on', async () => {
    const otherFile = join(workspace, 'other.avro');
    const other = { type: 'record', name: 'Other', fields: [{ name: 'weather', type: 'string' }, { name: 'gusts', type: 'double' }] };
    const writer = await ContainerFileWriter.create(otherFile, { schema: knownSchema(other, 'other') });
    await writer.append({ weather: 'snow', gusts: 3 });
    await writer.close();
    const result = await evaluate(['--config', config, '--file', otherFile]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr).toMatch(/other\.avro cannot be read as the schema of model [0-9a-f]+: .*; evaluate records of the schema the model was fitted on/);
  });

  it('refuses a model.dir that is not there', async () => {
    const gone = join(workspace, 'gone.yaml');
    await writeFile(gone, `label: {from: field, path: weather}\nbalance: {targets: {snow: 0.05}}\nmodel: {dir: ${join(workspace, 'no-model')}}\n`);
    const result = await evaluate(['--config', gone, '--file', weatherFile]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr).toMatch(/model\.dir .*no-model is not a directory: train a model there with `raretide fit`/);
  });

  it('explains itself in --help, with examples', async () => {
    const result = await evaluate(['--help']);
    expect(result.code).toBe(EXIT_OK);
    for (const flag of ['--file <in.avro>', '--from-topic', '--holdout <file.avro>', '--holdout-share <share>', '--out <report.html>', '--json <report.json>', '--seed <n>']) {
      expect(result.stdout).toContain(flag);
    }
    expect(result.stdout).toMatch(/Examples:\n {2}\$ raretide evaluate --config raretide\.yaml --file history\.avro\n/);
  });
});

describe('report paths', () => {
  it('defaults beside the input, or to raretide-report.html for a topic', () => {
    expect(reportPaths({ inputFile: 'data/history.avro' })).toEqual({ html: join('data', 'history-report.html'), json: join('data', 'history-report.json') });
    expect(reportPaths({})).toEqual({ html: 'raretide-report.html', json: 'raretide-report.json' });
    expect(reportPaths({ out: 'out/q.html', json: 'numbers.json' })).toEqual({ html: 'out/q.html', json: 'numbers.json' });
    expect(reportPaths({ out: 'report' })).toEqual({ html: 'report', json: 'report.json' });
  });
});

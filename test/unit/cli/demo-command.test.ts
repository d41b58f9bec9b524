/**
 * `raretide demo` without a broker, in-process on a small record count: every artefact is written, the
 * balanced file holds each fault at its target share, the report scores the rare classes, and the
 * output names each step and artefact. Plus the command's usage errors and the directory guard.
 */
import { mkdir, mkdtemp, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import { ContainerFileReader } from '../../../connector/avro/container/container-reader.js';
import type { CliContext } from '../../../connector/cli/cli-context.js';
import { registerDemo } from '../../../connector/cli/commands/demo.js';
import { demoTopics, DEMO_TARGETS } from '../../../connector/cli/demo/demo-config.js';
import { demoPaths, prepareDemoDirectory } from '../../../connector/cli/demo/demo-directory.js';
import { writeScenarioFiles } from '../../../connector/cli/demo/scenario-files.js';
import { EXIT_OK, EXIT_USAGE, runCli } from '../../../connector/cli/program.js';
import type { ReplaySummary } from '../../../connector/cli/replay/replay-summary.js';
import { PROVENANCE_FIELD_NAME } from '../../../connector/pipeline/provenance.js';
import type { QualityReport } from '../../../model/quality/quality-report.js';

async function demo(args: readonly string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: {}, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const code = await runCli(['node', 'raretide', 'demo', ...args], [registerDemo], context);
  return { code, stdout, stderr };
}

let workspace = '';
beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-demo-'));
});
afterAll(async () => rm(workspace, { recursive: true, force: true }));

describe('raretide demo (no broker)', () => {
  let run: { code: number; stdout: string; stderr: string };
  let dir = '';
  beforeAll(async () => {
    dir = join(workspace, 'demo');
    run = await demo(['--dir', dir, '--records', '4000', '--epochs', '4', '--seed', '3']);
  }, 240_000);

  it('exits 0 and writes every artefact', async () => {
    expect(run.stderr).not.toMatch(/error/i);
    expect(run.code).toBe(EXIT_OK);
    const paths = demoPaths(dir);
    for (const file of [paths.config, paths.schema, paths.history, paths.holdout, paths.balanced, paths.summary, paths.reportHtml, paths.reportJson, join(paths.model, 'manifest.json')]) {
      expect((await stat(file)).size, file).toBeGreaterThan(0);
    }
  });

  it('prints each step with its time and artefacts, the evaluation figures and what to do next', () => {
    const paths = demoPaths(dir);
    expect(run.stdout).toMatch(/INVENTED pump-station telemetry \(not real data\)/);
    for (const step of ['[1/4] generate', '[2/4] fit', '[3/4] replay', '[4/4] evaluate']) expect(run.stdout).toContain(step);
    expect(run.stdout.match(/^ +done in \d+\.\d s: /gm)).toHaveLength(4);
    for (const path of [paths.history, paths.holdout, paths.model, paths.balanced, paths.summary, paths.reportHtml, paths.reportJson, paths.config]) expect(run.stdout).toContain(path);
    expect(run.stdout).toMatch(/random forest: +cavitation \d\.\d\d → \d\.\d\d \(\d\.\d\d\) · seal-leak/);
    expect(run.stdout).toMatch(/all done in/);
    expect(run.stdout).toContain('KAFKA_BROKERS=host:port npx raretide demo --kafka');
    expect(run.stdout).toContain(`${dir} holds only invented data`);
  });

  it('writes a balanced file holding each fault at its target share, and a summary saying so', async () => {
    const summary = JSON.parse(await readFile(demoPaths(dir).summary, 'utf8')) as ReplaySummary;
    expect(summary.records.read).toBe(3000);
    const reader = await ContainerFileReader.open(demoPaths(dir).balanced);
    const perClass = new Map<string, number>();
    let total = 0;
    let synthetic = 0;
    for await (const record of reader as AsyncIterable<Record<string, unknown>>) {
      total += 1;
      perClass.set(record.condition as string, (perClass.get(record.condition as string) ?? 0) + 1);
      if (record[PROVENANCE_FIELD_NAME] !== null) synthetic += 1;
    }
    expect(total).toBe(summary.records.written);
    expect(synthetic).toBe(summary.records.synthetic);
    for (const [fault, target] of Object.entries(DEMO_TARGETS)) {
      const entry = summary.classes.find((candidate) => candidate.label === fault)!;
      expect(entry.before.share).toBeLessThan(target / 2);
      // The balance rounds each deficit stochastically: within half a percentage point, as replay is checked.
      expect(Math.abs(perClass.get(fault)! / total - target)).toBeLessThan(0.005);
    }
  });

  it('scores every fault on the held-out real readings in the report', async () => {
    const report = JSON.parse(await readFile(demoPaths(dir).reportJson, 'utf8')) as QualityReport;
    expect(report.input.rareClasses).toEqual(Object.keys(DEMO_TARGETS));
    // The last quarter of the readings, written to holdout.avro and never trained on.
    expect(report.input.holdoutFrom).toBe('a given holdout of 1000 records');
    expect(Object.values(report.input.holdout).reduce((sum, count) => sum + count, 0)).toBe(1000);
    expect(report.generators.map((result) => result.generator)).toContain('vae');
  });

  it('runs quietly with --quiet, reusing the directory it wrote before', async () => {
    const quiet = await demo(['--dir', dir, '--records', '2000', '--epochs', '1', '--quiet']);
    expect(quiet).toEqual({ code: EXIT_OK, stdout: '', stderr: '' });
  }, 240_000);
});

describe('raretide demo, usage', () => {
  it.each([
    [['--records', '10'], /--records = "10": expected a whole number from 2000/],
    [['--epochs', 'many'], /--epochs = "many"/],
    [['--duration', '5'], /--duration is for the live demo; add --kafka/],
    [['--topic-prefix', 'x'], /--topic-prefix is for the live demo/],
    [['--kafka', '--topic-prefix', 'bad name'], /--topic-prefix = "bad name"/],
  ])('refuses %j with exit code 2 and a message naming the flag', async (args, message) => {
    const result = await demo(['--dir', join(workspace, 'unused'), ...args]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr).toMatch(message);
  });

  it('never writes into a directory holding files it did not write', async () => {
    const foreign = join(workspace, 'foreign');
    await mkdir(foreign);
    await writeFile(join(foreign, 'notes.txt'), 'mine');
    const result = await demo(['--dir', foreign]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr).toContain(`--dir ${foreign} holds files the demo did not write`);
    await expect(prepareDemoDirectory(demoPaths(join(foreign, 'notes.txt')))).rejects.toThrow(/is a file/);
  });
});

describe('the generated files', () => {
  it('are byte-identical for the same seed', async () => {
    const write = async (name: string) => {
      const paths = demoPaths(join(workspace, name));
      await prepareDemoDirectory(paths);
      await writeScenarioFiles(paths, 2000, 5, { brokers: '127.0.0.1:9092', topics: demoTopics('raretide-demo'), schemaFile: paths.schema, modelDir: paths.model, seed: 5, epochs: 1, metricsPort: 0 });
      return Promise.all([readFile(paths.history), readFile(paths.holdout)]);
    };
    const [first, second] = [await write('same-1'), await write('same-2')];
    expect(first[0].equals(second[0])).toBe(true);
    expect(first[1].equals(second[1])).toBe(true);
    const reader = await ContainerFileReader.open(demoPaths(join(workspace, 'same-1')).history);
    expect(reader.header.metadata.get('raretide.demo')?.toString()).toMatch(/^INVENTED/);
    reader.close();
  });
});

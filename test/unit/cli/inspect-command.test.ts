import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { registerInspect } from '../../../connector/cli/commands/inspect.js';
import type { CliContext } from '../../../connector/cli/cli-context.js';
import { EXIT_OK, EXIT_USAGE, runCli } from '../../../connector/cli/program.js';
import { writeSeattleWeatherFile } from '../../support/open-data/weather-file.js';

async function inspect(args: readonly string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: {}, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const code = await runCli(['node', 'raretide', 'inspect', ...args], [registerInspect], context);
  return { code, stdout, stderr };
}

let directory = '';
let weatherFile = '';
beforeAll(async () => {
  directory = await mkdtemp(join(tmpdir(), 'raretide-inspect-'));
  // Open data: NOAA Seattle daily weather via vega-datasets, written as an Avro container file.
  weatherFile = await writeSeattleWeatherFile(directory);
});
afterAll(async () => rm(directory, { recursive: true, force: true }));

describe('raretide inspect', () => {
  it('prints the inferred field table of an Avro file sample', async () => {
    const result = await inspect(['--file', weatherFile, '--label', 'weather']);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(EXIT_OK);
    for (const field of ['precipitation', 'temp_max', 'temp_min', 'wind', 'weather', 'date']) {
      expect(result.stdout).toContain(field);
    }
    expect(result.stdout).toMatch(/snow/);
  });

  it('prints the same table as JSON, with the label and the field policies', async () => {
    const result = await inspect(['--file', weatherFile, '--label', 'weather', '--json']);
    expect(result.code).toBe(EXIT_OK);
    const table = JSON.parse(result.stdout) as { sampleSize: number; labelPath: string; rows: { path: string; policy: string }[] };
    expect(table.sampleSize).toBe(1461);
    expect(table.labelPath).toBe('weather');
    const policies = Object.fromEntries(table.rows.map((row) => [row.path, row.policy]));
    expect(policies).toMatchObject({ precipitation: 'learn', wind: 'learn', date: 'copy' });
  });

  it('honours --sample and field policies from a config file', async () => {
    const config = join(directory, 'inspect.yaml');
    await writeFile(config, 'label: {from: field, path: weather}\nfields:\n  wind: copy\n');
    const result = await inspect(['--file', weatherFile, '--config', config, '--sample', '100', '--json']);
    expect(result.code).toBe(EXIT_OK);
    const table = JSON.parse(result.stdout) as { sampleSize: number; rows: { path: string; policy: string }[] };
    expect(table.sampleSize).toBe(100);
    expect(table.rows.find((row) => row.path === 'wind')?.policy).toBe('copy');
  });

  it('rejects a bad sample size and a missing file with a usage error (exit 2)', async () => {
    const badSample = await inspect(['--file', weatherFile, '--sample', 'lots']);
    expect(badSample.code).toBe(EXIT_USAGE);
    expect(badSample.stderr).toMatch(/--sample = "lots"/);
    const missing = await inspect(['--file', join(directory, 'absent.avro')]);
    expect(missing.code).toBe(EXIT_USAGE);
    expect(missing.stderr).toMatch(/absent\.avro/);
  });
});

import { spawn } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Command } from 'commander';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { registerCheck } from '../../../connector/cli/commands/check.js';
import { type CliContext, type RegisterCommand } from '../../../connector/cli/cli-context.js';
import { EXIT_FAILURE, EXIT_OK, EXIT_USAGE, runCli } from '../../../connector/cli/program.js';
import { RaretideError, UsageError } from '../../../config/errors.js';

interface Captured {
  readonly code: number;
  readonly stdout: string;
  readonly stderr: string;
}

async function run(args: readonly string[], commands: readonly RegisterCommand[] = [registerCheck], env: Record<string, string> = {}): Promise<Captured> {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const code = await runCli(['node', 'raretide', ...args], commands, context);
  return { code, stdout, stderr };
}

/** A command that fails the way a runtime problem would, to check the exit-code mapping. */
const failing =
  (error: Error): RegisterCommand =>
  (program: Command) => {
    program.command('explode').action(() => {
      throw error;
    });
  };

let directory = '';
let invalidFile = '';
beforeAll(async () => {
  directory = await mkdtemp(join(tmpdir(), 'raretide-cli-'));
  invalidFile = join(directory, 'invalid.yaml');
  await writeFile(invalidFile, 'balance:\n  targets: {jam: 1.5}\n');
});
afterAll(async () => {
  await rm(directory, { recursive: true, force: true });
});

describe('raretide check (in process)', () => {
  it('prints "config ok" and a summary for a valid file, exit 0', async () => {
    const result = await run(['check', '--config', 'config/examples/minimal.yaml']);
    expect(result).toMatchObject({ code: EXIT_OK, stderr: '' });
    expect(result.stdout).toMatch(/^config ok: config\/examples\/minimal\.yaml\n/);
    expect(result.stdout).toMatch(/balance\s+jam 5%, misroute 3%; k ≤ 5/);
    expect(result.stdout).toMatch(/metrics\s+http:\/\/127\.0\.0\.1:9464\/metrics/);
  });

  it('applies environment overrides before validating', async () => {
    const result = await run(['check', '-c', 'config/examples/minimal.yaml'], [registerCheck], { RARETIDE__METRICS__PORT: '9100' });
    expect(result.stdout).toContain('http://127.0.0.1:9100/metrics');
  });

  it('--quiet prints nothing on success, before or after the command name', async () => {
    expect(await run(['--quiet', 'check', '-c', 'config/examples/minimal.yaml'])).toEqual({ code: EXIT_OK, stdout: '', stderr: '' });
    expect(await run(['check', '-c', 'config/examples/minimal.yaml', '--quiet'])).toEqual({ code: EXIT_OK, stdout: '', stderr: '' });
  });

  it('an invalid config: exit 2, one line naming path, value and fix', async () => {
    const result = await run(['check', '--config', invalidFile]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stdout).toBe('');
    expect(result.stderr).toBe('config error: balance.targets.jam = 1.5 (number): expected a share between 0 and 1 (exclusive), e.g. 0.05\n');
  });

  it('--log-format json writes the error as one JSON line', async () => {
    const result = await run(['--log-format', 'json', 'check', '--config', invalidFile]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(JSON.parse(result.stderr)).toMatchObject({ level: 'error', code: 'config.invalid', message: expect.stringContaining('balance.targets.jam') });
  });

  it.each([
    ['missing --config', ['check'], "error: required option '-c, --config <file>' not specified"],
    ['unknown command', ['chek'], "error: unknown command 'chek' (Did you mean check?)"],
    ['bad --log-format', ['--log-format', 'xml', 'check'], "error: option '--log-format <format>' argument 'xml' is invalid. Allowed choices are json, text."],
  ])('usage error (%s): exit 2, one line', async (_name, args, line) => {
    const result = await run(args);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr).toBe(`${line}\n`);
  });

  it('--help and --version exit 0 and show an example', async () => {
    const help = await run(['check', '--help']);
    expect(help.code).toBe(EXIT_OK);
    expect(help.stdout).toContain('$ raretide check --config config/examples/minimal.yaml');
    expect((await run(['--version'])).stdout).toMatch(/^\d+\.\d+\.\d+/);
  });

  it('runtime failures exit 1 with the message and no stack; usage errors from commands exit 2', async () => {
    const runtime = await run(['explode'], [failing(new RaretideError('kafka.transport', 'broker 127.0.0.1:9 unreachable', { retriable: true }))]);
    expect(runtime).toEqual({ code: EXIT_FAILURE, stdout: '', stderr: 'error: broker 127.0.0.1:9 unreachable\n' });
    const usage = await run(['explode'], [failing(new UsageError('--rate must be a positive number, got -3'))]);
    expect(usage).toEqual({ code: EXIT_USAGE, stdout: '', stderr: '--rate must be a positive number, got -3\n' });
  });
});

describe('raretide check (a real process)', () => {
  it('exits 2 with a one-line stderr for an invalid config', async () => {
    const child = spawn(process.execPath, ['--import', 'tsx', 'connector/cli/main.ts', 'check', '--config', invalidFile], {
      env: { PATH: process.env.PATH ?? '' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
    child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
    const code = await new Promise<number | null>((resolve) => child.on('close', resolve));
    expect({ code, stdout }).toEqual({ code: 2, stdout: '' });
    expect(stderr.trimEnd().split('\n')).toEqual(['config error: balance.targets.jam = 1.5 (number): expected a share between 0 and 1 (exclusive), e.g. 0.05']);
  });
});

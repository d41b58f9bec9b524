import { Command, CommanderError, Option } from 'commander';
import { RaretideError, UsageError } from '../../config/errors.js';
import { globalOptions, type CliContext, type RegisterCommand } from './cli-context.js';
import { packageVersion } from './package-version.js';

/** Exit codes: 0 success, 1 runtime failure, 2 usage or config error. */
export const EXIT_OK = 0;
export const EXIT_FAILURE = 1;
export const EXIT_USAGE = 2;

/** Joins commander's multi-line messages ("error: …\n(Did you mean …?)") into one line. */
function oneLine(text: string): string {
  return `${text.trim().replace(/\s*\n\s*/g, ' ')}\n`;
}

function buildProgram(commands: readonly RegisterCommand[], context: CliContext): Command {
  const program = new Command('raretide')
    .description('Adds realistic synthetic records of rare classes to a Kafka stream, with provenance.')
    .version(packageVersion())
    .addOption(new Option('--quiet', 'print only errors'))
    .addOption(new Option('--log-format <format>', 'log line format (overrides log.format)').choices(['json', 'text']))
    .exitOverride()
    .showSuggestionAfterError(true)
    .configureOutput({
      writeOut: context.stdout,
      writeErr: context.stderr,
      outputError: (text, write) => write(oneLine(text)),
    });
  for (const register of commands) register(program, context);
  // Subcommands inherit the same output and exit handling.
  for (const command of program.commands) command.exitOverride().configureOutput(program.configureOutput());
  return program;
}

function reportError(error: unknown, program: Command, context: CliContext): void {
  const { logFormat } = globalOptions(program);
  const message = error instanceof Error ? error.message : String(error);
  if (logFormat === 'json') {
    const code = error instanceof RaretideError ? error.code : 'internal';
    context.stderr(`${JSON.stringify({ level: 'error', code, message })}\n`);
  } else {
    context.stderr(error instanceof UsageError ? `${message}\n` : `error: ${message}\n`);
  }
}

/** Runs the CLI on `argv` (as in `process.argv`) and returns the exit code; never throws. */
export async function runCli(argv: readonly string[], commands: readonly RegisterCommand[], context: CliContext): Promise<number> {
  const program = buildProgram(commands, context);
  try {
    await program.parseAsync([...argv]);
    return EXIT_OK;
  } catch (error) {
    if (error instanceof CommanderError) {
      // Commander has printed its message; help and version end with exit code 0.
      return error.exitCode === 0 ? EXIT_OK : EXIT_USAGE;
    }
    reportError(error, program, context);
    return error instanceof UsageError ? EXIT_USAGE : EXIT_FAILURE;
  }
}

/** The context of a real process: its environment, stdout and stderr. */
export function processContext(): CliContext {
  return {
    env: process.env,
    stdout: (text) => process.stdout.write(text),
    stderr: (text) => process.stderr.write(text),
    stderrColumns: process.stderr.isTTY ? process.stderr.columns : undefined,
  };
}

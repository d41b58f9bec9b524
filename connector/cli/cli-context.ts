import type { Command } from 'commander';

/**
 * What a command may touch of the outside world. `main.ts` wires it to the process; tests pass their
 * own, so commands run in-process without spawning.
 */
export interface CliContext {
  /** Variables for `RARETIDE__…` config overrides. */
  readonly env: Readonly<Record<string, string | undefined>>;
  /** Writes to standard output; text carries its own newlines. */
  readonly stdout: (text: string) => void;
  /** Writes to standard error; text carries its own newlines. */
  readonly stderr: (text: string) => void;
  /**
   * Width of the terminal standard error goes to, or undefined when it is not a terminal: progress is
   * then logged line by line instead of redrawn in place.
   */
  readonly stderrColumns?: number;
}

/** Adds one subcommand to the program. */
export type RegisterCommand = (program: Command, context: CliContext) => void;

/** Options every command accepts, given before or after the command name. */
export interface GlobalOptions {
  /** Print only errors. */
  readonly quiet: boolean;
  /** Log line format; when absent, the config's `log.format` decides. */
  readonly logFormat?: 'json' | 'text';
}

export function globalOptions(command: Command): GlobalOptions {
  const options = command.optsWithGlobals<{ quiet?: boolean; logFormat?: 'json' | 'text' }>();
  return options.logFormat === undefined ? { quiet: options.quiet === true } : { quiet: options.quiet === true, logFormat: options.logFormat };
}

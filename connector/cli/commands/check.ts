import type { Command } from 'commander';
import { loadConfigFile } from '../../../config/load.js';
import { globalOptions, type CliContext } from '../cli-context.js';
import { renderConfigSummary } from '../config-summary.js';
import { configOption } from '../options.js';

/** `raretide check`: validates a config file (with its environment overrides) and summarises it. */
export function registerCheck(program: Command, context: CliContext): void {
  program
    .command('check')
    .description('validate a config file and print what raretide understood from it')
    .addOption(configOption())
    .addHelpText('after', '\nExample:\n  $ raretide check --config config/examples/minimal.yaml\n')
    .action(async (options: { config: string }, command: Command) => {
      const config = await loadConfigFile(options.config, { env: context.env });
      if (!globalOptions(command).quiet) context.stdout(renderConfigSummary(options.config, config));
    });
}

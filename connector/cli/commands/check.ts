import { Option, type Command } from 'commander';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import { checkModel } from '../check/model-check.js';
import { renderModelCheck } from '../check/model-report.js';
import { globalOptions, type CliContext } from '../cli-context.js';
import { renderConfigSummary } from '../config-summary.js';
import { configOption } from '../options.js';

interface CheckOptions {
  readonly config: string;
  /** False with `--no-model`. */
  readonly model: boolean;
}

/**
 * `raretide check`: validates a config file (with its environment overrides) and summarises it; when
 * `model.dir` holds a model, loads it and checks it against the configured schemas as `run` would.
 */
export function registerCheck(program: Command, context: CliContext): void {
  program
    .command('check')
    .description('validate a config file, print what raretide understood from it, and check the model in model.dir against it')
    .addOption(configOption())
    .addOption(new Option('--no-model', 'skip loading the model in model.dir'))
    .addHelpText(
      'after',
      '\nExit 2 for a config error or a schema the model cannot read; exit 1 for a corrupt model.\n' +
        '\nExample:\n  $ raretide check --config config/examples/minimal.yaml\n',
    )
    .action(async (options: CheckOptions, command: Command) => {
      const config = await loadConfigFile(options.config, { env: context.env });
      const quiet = globalOptions(command).quiet;
      if (!quiet) context.stdout(renderConfigSummary(options.config, config));
      if (!options.model || config.model === undefined) return;
      const check = await checkModel(requireSections(config, 'check', ['model']));
      if (!quiet) context.stdout(renderModelCheck(check, options.config));
    });
}

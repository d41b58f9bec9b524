import { Option } from 'commander';

/** `--config <file>`, shared by every command that reads a config file. */
export function configOption(): Option {
  return new Option('-c, --config <file>', 'config file (.yaml, .yml or .json); RARETIDE__… variables override it').makeOptionMandatory();
}

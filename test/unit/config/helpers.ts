import { ConfigError } from '../../../config/errors.js';

/** A config valid for every command: the base the error cases below break one thing of. */
export const VALID_YAML = `kafka:
  brokers: 127.0.0.1:9092
source:
  topic: sorter.events
  group: raretide-sorter
  framing: {kind: raw, schemaFile: schemas/sorter-event.avsc}
sink:
  topic: sorter.events.balanced
  deadLetterTopic: sorter.events.dead-letter
label: {from: field, path: outcome}
balance:
  targets: {jam: 0.05, misroute: 0.03}
model:
  dir: models/sorter
`;

/** Runs `load` and returns the ConfigError it throws (failing the test when it does not). */
export function configErrorOf(load: () => unknown): ConfigError {
  try {
    load();
  } catch (error) {
    if (error instanceof ConfigError) return error;
    throw error;
  }
  throw new Error('expected a ConfigError, but the config was accepted');
}

export async function configErrorOfAsync(load: () => Promise<unknown>): Promise<ConfigError> {
  try {
    await load();
  } catch (error) {
    if (error instanceof ConfigError) return error;
    throw error;
  }
  throw new Error('expected a ConfigError, but the config was accepted');
}

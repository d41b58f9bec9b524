import { readFile } from 'node:fs/promises';
import { applyEnvOverrides, type Environment } from './env-overrides.js';
import { ConfigError } from './errors.js';
import { formatIssues, markDefaultMessage } from './format-issues.js';
import { formatOf, parseConfigDocument, type DocumentFormat } from './parse-document.js';
import { configSchema, type RaretideConfig } from './schema.js';

/**
 * Config loading in three steps: parse the file (YAML or JSON), apply `RARETIDE__…` environment
 * overrides, validate against the schema. Every failure is a ConfigError (a UsageError, CLI exit 2)
 * whose message has one line per problem.
 */

export interface LoadOptions {
  /** Variables to read overrides from; pass `process.env` at the edge. @default {} (no overrides) */
  readonly env?: Environment;
}

/** Validates a parsed document; `origins` names the variable behind each overridden path. */
export function validateConfig(document: unknown, origins: ReadonlyMap<string, string> = new Map()): RaretideConfig {
  const result = configSchema.safeParse(document, { error: markDefaultMessage });
  if (result.success) return result.data;
  throw new ConfigError(formatIssues(result.error.issues, { schema: configSchema, document, origins }), { cause: result.error });
}

/** Parses, overrides and validates config text; `fileName` picks the format and appears in syntax errors. */
export function parseConfig(text: string, fileName: string, options: LoadOptions & { format?: DocumentFormat } = {}): RaretideConfig {
  const parsed = parseConfigDocument(text, fileName, options.format);
  const { document, origins } = applyEnvOverrides(parsed, options.env ?? {}, configSchema);
  return validateConfig(document, origins);
}

const READ_FAILURES: Readonly<Record<string, string>> = {
  ENOENT: 'no such file; check the --config path',
  EISDIR: 'it is a directory; give the path of a .yaml or .json file',
  EACCES: 'permission denied; make the file readable',
};

/** Reads and loads a config file. */
export async function loadConfigFile(filePath: string, options: LoadOptions = {}): Promise<RaretideConfig> {
  const format = formatOf(filePath);
  let text: string;
  try {
    text = await readFile(filePath, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? '';
    const reason = READ_FAILURES[code] ?? `${(error as Error).message}`;
    throw new ConfigError([{ path: '', code: 'unreadable', message: `config error: cannot read ${filePath}: ${reason}` }], { cause: error });
  }
  return parseConfig(text, filePath, { ...options, format });
}

import { extname } from 'node:path';
import { LineCounter, parseDocument as parseYamlDocument } from 'yaml';
import { ConfigError } from './errors.js';

/** Config files are YAML (`.yaml`, `.yml`) or JSON (`.json`), told apart by extension. */
export type DocumentFormat = 'yaml' | 'json';

const FORMATS: Readonly<Record<string, DocumentFormat>> = { '.yaml': 'yaml', '.yml': 'yaml', '.json': 'json' };

function fail(path: string, code: string, message: string): never {
  throw new ConfigError([{ path, code, message: `config error: ${message}` }]);
}

export function formatOf(fileName: string): DocumentFormat {
  const format = FORMATS[extname(fileName).toLowerCase()];
  if (format === undefined) {
    fail('', 'unknown_format', `${fileName}: unknown file type ${JSON.stringify(extname(fileName))}; use a .yaml, .yml or .json file`);
  }
  return format;
}

/**
 * Parses config text into a plain mapping. Syntax errors name the file, line and column; an empty file
 * or a top level that is not a mapping is an error too.
 */
export function parseConfigDocument(text: string, fileName: string, format: DocumentFormat = formatOf(fileName)): Record<string, unknown> {
  const value = format === 'yaml' ? parseYaml(text, fileName) : parseJson(text, fileName);
  if (value === null || value === undefined) {
    fail('', 'empty', `${fileName} is empty; expected a mapping of sections such as kafka, source, sink, balance (see config/examples/minimal.yaml)`);
  }
  if (typeof value !== 'object' || Array.isArray(value)) {
    const kind = Array.isArray(value) ? 'a list' : `a ${typeof value}`;
    fail('', 'not_a_mapping', `${fileName}: the top level is ${kind}; expected a mapping of sections such as kafka, source, sink, balance`);
  }
  return value as Record<string, unknown>;
}

function parseYaml(text: string, fileName: string): unknown {
  const lineCounter = new LineCounter();
  // `prettyErrors: false` keeps messages to one line; the position comes from the line counter.
  const document = parseYamlDocument(text, { lineCounter, prettyErrors: false, uniqueKeys: true });
  const [error] = document.errors;
  if (error !== undefined) {
    const { line, col } = lineCounter.linePos(error.pos[0]);
    fail('', 'yaml_syntax', `${fileName} line ${line}, column ${col}: ${error.message} (YAML syntax)`);
  }
  return document.toJS();
}

function parseJson(text: string, fileName: string): unknown {
  if (text.trim() === '') return null;
  try {
    return JSON.parse(text) as unknown;
  } catch (error) {
    fail('', 'json_syntax', `${fileName}: ${describeJsonError(error, text)} (JSON syntax)`);
  }
}

/** Node's JSON messages vary by version; keep one line and turn "position N" into line and column. */
function describeJsonError(error: unknown, text: string): string {
  const message = (error instanceof Error ? error.message : String(error)).replace(/, ".*" is not valid JSON$/s, '');
  const position = /at position (\d+)/.exec(message);
  if (position?.[1] === undefined || /\(line \d+/.test(message)) return message.replace(/\s+/g, ' ');
  const before = text.slice(0, Number(position[1]));
  const line = before.split('\n').length;
  const column = before.length - before.lastIndexOf('\n');
  return `${message.replace(/ in JSON at position \d+/, '')} at line ${line}, column ${column}`;
}

/**
 * The label stage: a record's class from a field path, a header or the key, as the `label` config
 * section says. A record whose class is missing, or is not one the model knows, cannot be planned: it
 * becomes a `missing-label` problem and goes to the dead letters.
 */
import type { LabelConfig } from '../../config/sections/label.js';
import { fail, ok, type Result } from '../avro/problems.js';
import type { InputMessage } from './source-sink.js';
import type { RecordValue } from './synthesizer.js';

export type LabelReader = (message: InputMessage, record: RecordValue) => Result<string>;

const STRICT_UTF8 = new TextDecoder('utf-8', { fatal: true, ignoreBOM: true });

/** A reader for `config`; the class must be one of `known` (the model's classes). */
export function labelReader(config: LabelConfig, known: readonly string[]): LabelReader {
  const knownClasses = new Set(known);
  const listed = describeClasses(known);
  const read = rawLabelReader(config);
  return (message, record) => {
    const label = read(message, record);
    if (!label.ok || knownClasses.has(label.value)) return label;
    return fail('missing-label', `class ${JSON.stringify(label.value)} (${describeSource(config)}) is not one the model was fitted on (${listed}); refit the model with records of that class, or fix the label`);
  };
}

function rawLabelReader(config: LabelConfig): LabelReader {
  switch (config.from) {
    case 'field': {
      const segments = config.path.split('.');
      return (_message, record) => {
        const value = valueAt(record, segments);
        if (value === null || value === undefined) return fail('missing-label', `the record has no value at label field ${config.path}`, { path: config.path });
        const text = scalarText(value);
        if (text === undefined) {
          return fail('missing-label', `label field ${config.path} holds ${describeValue(value)}, not a class (a string, enum symbol, boolean or integer)`, {
            path: config.path,
          });
        }
        return ok(text);
      };
    }
    case 'header':
      return (message) => {
        const values = message.headers.flatMap((header) => (Object.hasOwn(header, config.name) ? [header[config.name]!] : []));
        if (values.length === 0) return fail('missing-label', `the message has no header ${config.name}`);
        if (values.length > 1) return fail('missing-label', `the message has ${values.length} headers named ${config.name}; the class is ambiguous`);
        return textLabel(values[0]!, `header ${config.name}`);
      };
    case 'key':
      return (message) => (message.key === null ? fail('missing-label', 'the message has no key') : textLabel(message.key, 'the key'));
  }
}

function valueAt(record: RecordValue, segments: readonly string[]): unknown {
  let value: unknown = record;
  for (const segment of segments) {
    if (value === null || typeof value !== 'object') return undefined;
    value = unwrapUnion((value as Record<string, unknown>)[segment]);
  }
  return value;
}

/** avsc wraps a union value as `{branch: value}` where it cannot tell the branch from the value. */
function unwrapUnion(value: unknown): unknown {
  if (value === null || typeof value !== 'object' || Buffer.isBuffer(value) || Array.isArray(value)) return value;
  const keys = Object.keys(value);
  const prototype = Object.getPrototypeOf(value) as unknown;
  // avsc builds records with their own class; a wrapped branch is a plain one-key object.
  return keys.length === 1 && prototype === Object.prototype ? (value as Record<string, unknown>)[keys[0]!] : value;
}

function scalarText(value: unknown): string | undefined {
  if (typeof value === 'string') return value === '' ? undefined : value;
  if (typeof value === 'boolean') return String(value);
  if (typeof value === 'number' && Number.isInteger(value)) return String(value);
  if (typeof value === 'bigint') return value.toString();
  return undefined;
}

function textLabel(value: Buffer | string, where: string): Result<string> {
  let text: string;
  try {
    text = typeof value === 'string' ? value : STRICT_UTF8.decode(value);
  } catch {
    return fail('missing-label', `${where} is not valid UTF-8 text, so it cannot name a class`);
  }
  return text === '' ? fail('missing-label', `${where} is empty`) : ok(text);
}

function describeSource(config: LabelConfig): string {
  return config.from === 'field' ? `field ${config.path}` : config.from === 'header' ? `header ${config.name}` : 'the key';
}

function describeClasses(classes: readonly string[]): string {
  const shown = classes.slice(0, 8).join(', ');
  return classes.length > 8 ? `${shown} and ${classes.length - 8} more` : shown;
}

function describeValue(value: unknown): string {
  if (Buffer.isBuffer(value)) return `${value.length} bytes`;
  const text = JSON.stringify(value) ?? String(value);
  return text.length > 40 ? `${text.slice(0, 37)}...` : text;
}

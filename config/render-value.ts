/** Longest rendering of a bad value inside a one-line message. */
const MAX_VALUE_LENGTH = 40;

/** The value's kind in the words of YAML: `string`, `number`, `boolean`, `null`, `list`, `mapping`. */
export function valueKind(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'list';
  if (typeof value === 'object') return 'mapping';
  return typeof value;
}

/** A compact, truncated rendering of a value: `1.5`, `"fraud"`, `{"jam":0.5}`, `"a very long…"`. */
export function renderValue(value: unknown): string {
  const text = typeof value === 'bigint' || typeof value === 'undefined' ? String(value) : (JSON.stringify(value) ?? String(value));
  if (text.length <= MAX_VALUE_LENGTH) return text;
  const cut = text.slice(0, MAX_VALUE_LENGTH - 1);
  return typeof value === 'string' ? `${cut}…"` : `${cut}…`;
}

/**
 * `1.5 (number)`, the value and its kind as an error message shows them; `shown` replaces the value's
 * rendering (a credential's `[redacted]`) and keeps the kind.
 */
export function renderValueWithKind(value: unknown, note?: string, shown: string = renderValue(value)): string {
  return `${shown} (${valueKind(value)}${note === undefined ? '' : `, ${note}`})`;
}

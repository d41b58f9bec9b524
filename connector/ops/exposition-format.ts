/**
 * The pieces of Prometheus' text exposition format, version 0.0.4, that every sample line needs:
 * escaping and number spelling. Source: prometheus/docs `content/docs/instrumenting/exposition_formats.md`,
 * "Text format details".
 */

/** The `Content-Type` a scraper recognises as text format 0.0.4. */
export const EXPOSITION_CONTENT_TYPE = 'text/plain; version=0.0.4; charset=utf-8';

/** Metric names: `[a-zA-Z_:][a-zA-Z0-9_:]*` (the expression language's rule). */
export const METRIC_NAME = /^[a-zA-Z_:][a-zA-Z0-9_:]*$/;

/** Label names: `[a-zA-Z_][a-zA-Z0-9_]*`; names starting with `__` are reserved for Prometheus itself. */
export const LABEL_NAME = /^(?!__)[a-zA-Z_][a-zA-Z0-9_]*$/;

/** Label values may hold any UTF-8; backslash, double quote and line feed are written `\\`, `\"` and `\n`. */
export function escapeLabelValue(value: string): string {
  return value.replace(/[\\"\n]/g, (character) => (character === '\n' ? '\\n' : `\\${character}`));
}

/** HELP text escapes backslash and line feed only (a double quote stays as it is). */
export function escapeHelp(text: string): string {
  return text.replace(/[\\\n]/g, (character) => (character === '\n' ? '\\n' : '\\\\'));
}

/**
 * A sample value as Go's `strconv.ParseFloat` reads it: `+Inf`, `-Inf` and `NaN` spelled out, finite
 * numbers in JavaScript's shortest round-trip form (`1e+21` and `5e-7` parse too).
 */
export function formatSampleValue(value: number): string {
  if (Number.isNaN(value)) return 'NaN';
  if (value === Infinity) return '+Inf';
  if (value === -Infinity) return '-Inf';
  return String(value);
}

/** `{a="x",b="y"}` for the given pairs in order, or the empty string when there are none. */
export function formatLabels(pairs: readonly (readonly [string, string])[]): string {
  if (pairs.length === 0) return '';
  return `{${pairs.map(([name, value]) => `${name}="${escapeLabelValue(value)}"`).join(',')}}`;
}

/**
 * A small structured logger: one JSON object per line (`{"time","level","msg",...fields}`) for
 * collectors, or one text line for people, written to an injected sink (standard error by default).
 * Every field and the message pass through `toLogValue`, so secrets are redacted before any text exists.
 */
import { SYSTEM_CLOCK, type Clock } from './clock.js';
import { redactText, toLogValue } from './redact.js';

export type LogLevel = 'error' | 'warn' | 'info' | 'debug';
export type LogFormat = 'json' | 'text';
export type LogFields = Readonly<Record<string, unknown>>;

/** Most severe first: a line is written when its rank is at most the threshold's. */
const LEVEL_RANK: Readonly<Record<LogLevel, number>> = { error: 0, warn: 1, info: 2, debug: 3 };

/** Keys every line owns; a field of the same name is written as `field.<name>` instead. */
const RESERVED_KEYS = new Set(['time', 'level', 'msg']);

export interface Logger {
  log(level: LogLevel, msg: string, fields?: LogFields): void;
  error(msg: string, fields?: LogFields): void;
  warn(msg: string, fields?: LogFields): void;
  info(msg: string, fields?: LogFields): void;
  debug(msg: string, fields?: LogFields): void;
  /** True when a line of this level would be written (to skip building costly fields). */
  enabled(level: LogLevel): boolean;
  /** A logger that adds `fields` to every line (e.g. `{ component: 'consumer' }`). */
  child(fields: LogFields): Logger;
}

export interface LoggerOptions {
  /**
   * Least severe level written.
   * @default info
   */
  readonly level?: LogLevel;
  /** @default json */
  readonly format?: LogFormat;
  /**
   * Errors only, whatever `level` says (the CLI's `--quiet`).
   * @default false
   */
  readonly quiet?: boolean;
  /**
   * Receives each finished line, newline included.
   * @default writes to process.stderr
   */
  readonly sink?: (line: string) => void;
  readonly clock?: Clock;
  /** Fields on every line. */
  readonly fields?: LogFields;
}

const STDERR_SINK = (line: string): void => {
  process.stderr.write(line);
};

export function createLogger(options: LoggerOptions = {}): Logger {
  const threshold = options.quiet === true ? LEVEL_RANK.error : LEVEL_RANK[options.level ?? 'info'];
  const render = (options.format ?? 'json') === 'json' ? jsonLine : textLine;
  const sink = options.sink ?? STDERR_SINK;
  const clock = options.clock ?? SYSTEM_CLOCK;

  const make = (bound: LogFields): Logger => {
    const enabled = (level: LogLevel) => LEVEL_RANK[level] <= threshold;
    const log = (level: LogLevel, msg: string, fields?: LogFields) => {
      if (!enabled(level)) return;
      const merged = toLogValue(fields === undefined ? bound : { ...bound, ...fields }) as Record<string, unknown>;
      sink(render(new Date(clock.now()).toISOString(), level, redactText(msg), merged));
    };
    return {
      log,
      error: (msg, fields) => log('error', msg, fields),
      warn: (msg, fields) => log('warn', msg, fields),
      info: (msg, fields) => log('info', msg, fields),
      debug: (msg, fields) => log('debug', msg, fields),
      enabled,
      child: (fields) => make({ ...bound, ...fields }),
    };
  };
  return make(options.fields ?? {});
}

const ignore = (): void => undefined;

/** Writes nothing; for callers that take a logger but are run without one. */
export const SILENT_LOGGER: Logger = {
  log: ignore,
  error: ignore,
  warn: ignore,
  info: ignore,
  debug: ignore,
  enabled: () => false,
  child: () => SILENT_LOGGER,
};

function fieldEntries(fields: Record<string, unknown>): [string, unknown][] {
  return Object.entries(fields).map(([key, value]) => [RESERVED_KEYS.has(key) ? `field.${key}` : key, value]);
}

function jsonLine(time: string, level: LogLevel, msg: string, fields: Record<string, unknown>): string {
  return `${JSON.stringify({ time, level, msg, ...Object.fromEntries(fieldEntries(fields)) })}\n`;
}

/** `2024-05-01T12:00:00.000Z WARN  message key=value other="two words"`. */
function textLine(time: string, level: LogLevel, msg: string, fields: Record<string, unknown>): string {
  const pairs = fieldEntries(fields).map(([key, value]) => `${key}=${textValue(value)}`);
  return `${[time, level.toUpperCase().padEnd(5), msg.replace(/\n/g, '\\n'), ...pairs].join(' ')}\n`;
}

function textValue(value: unknown): string {
  if (typeof value === 'string' && /^[^\s"=]+$/.test(value)) return value;
  return JSON.stringify(value);
}

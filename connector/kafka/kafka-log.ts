import type { RaretideError } from '../../config/errors.js';

/** One thing a Kafka adapter wants logged; the worker renders it (JSON or text) with its own logger. */
export interface KafkaLogEntry {
  readonly level: 'debug' | 'info' | 'warn' | 'error';
  readonly message: string;
  readonly error?: RaretideError;
  readonly fields?: Readonly<Record<string, unknown>>;
}

export type KafkaLogger = (entry: KafkaLogEntry) => void;

/** The default: adapters stay silent unless given a logger. */
export const silentLogger: KafkaLogger = () => undefined;

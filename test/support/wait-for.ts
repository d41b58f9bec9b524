import { setTimeout as delay } from 'node:timers/promises';

export interface WaitForOptions {
  /** What is being waited for, for the timeout message. */
  what: string;
  /** @default 30000 */
  timeoutMs?: number;
  /** @default 50 */
  intervalMs?: number;
}

/**
 * Polls `probe` until it returns something other than `undefined`/`false`, and returns that.
 * The way tests wait for an effect: on a condition with a deadline, never a fixed sleep.
 */
export async function waitFor<T>(probe: () => T | undefined | false | Promise<T | undefined | false>, options: WaitForOptions): Promise<T> {
  const timeoutMs = options.timeoutMs ?? 30_000;
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const result = await probe();
    if (result !== undefined && result !== false) return result;
    if (Date.now() >= deadline) throw new Error(`timed out after ${timeoutMs} ms waiting for ${options.what}`);
    await delay(options.intervalMs ?? 50);
  }
}

/**
 * Graceful shutdown on SIGTERM/SIGINT: the first signal calls `stop` once (the worker finishes its
 * batch, commits and closes); a second signal exits at once; a stop still running at the deadline
 * exits non-zero with a message saying so. The process and the timers are parameters, so tests drive
 * signals and time by hand.
 */
import { SILENT_LOGGER, type Logger } from './logger.js';

export type ShutdownSignal = 'SIGTERM' | 'SIGINT';

/** 128 + the signal number, the exit status a shell reports for a process a signal ended (common practice). */
export const SIGNAL_EXIT_CODES: Readonly<Record<ShutdownSignal, number>> = { SIGINT: 130, SIGTERM: 143 };

/** Exit status when the stop failed or overran the deadline: a runtime failure in the CLI's codes. */
export const FAILED_STOP_EXIT_CODE = 1;

/** The parts of `process` this helper uses. */
export interface ShutdownProcess {
  on(signal: ShutdownSignal, listener: () => void): unknown;
  off(signal: ShutdownSignal, listener: () => void): unknown;
  exit(code: number): void;
}

export interface ShutdownTimers {
  /** Arms `callback` after `ms`; the returned function disarms it. The timer must not keep the process alive. */
  after(ms: number, callback: () => void): () => void;
}

const NODE_TIMERS: ShutdownTimers = {
  after(ms, callback) {
    const timer = setTimeout(callback, ms);
    timer.unref();
    return () => clearTimeout(timer);
  },
};

export interface GracefulShutdownOptions {
  /** Finishes the batch, commits and closes; called at most once. */
  readonly stop: (reason: string) => Promise<void>;
  /**
   * Longest time `stop` may take before the process exits with code 1.
   * @default 30000
   */
  readonly deadlineMs?: number;
  readonly log?: Logger;
  /** @default process */
  readonly process?: ShutdownProcess;
  readonly timers?: ShutdownTimers;
}

export interface GracefulShutdown {
  /** Starts the stop as a signal would, e.g. after a fatal error or at the end of a demo; later calls do nothing. */
  request(reason: string): void;
  /** True once a stop was asked for. */
  readonly requested: boolean;
  /** Settles when `stop` finished cleanly. */
  readonly stopped: Promise<void>;
  /** Removes the signal listeners and disarms the deadline. */
  dispose(): void;
}

export function installGracefulShutdown(options: GracefulShutdownOptions): GracefulShutdown {
  const target = options.process ?? process;
  const timers = options.timers ?? NODE_TIMERS;
  const log = options.log ?? SILENT_LOGGER;
  const deadlineMs = options.deadlineMs ?? 30_000;
  let requested = false;
  let disarm = (): void => undefined;
  let markStopped = (): void => undefined;
  const stopped = new Promise<void>((resolve) => {
    markStopped = resolve;
  });

  const request = (reason: string): void => {
    if (requested) return;
    requested = true;
    log.info(`${reason}: finishing the current batch, committing and closing (deadline ${deadlineMs} ms)`);
    disarm = timers.after(deadlineMs, () => {
      log.error(
        `shutdown did not finish within ${deadlineMs} ms after ${reason}; exiting with code ${FAILED_STOP_EXIT_CODE}. ` +
          'The unfinished batch is not committed and will be processed again after a restart; look for a stuck commit or close, or allow more time.',
      );
      target.exit(FAILED_STOP_EXIT_CODE);
    });
    let running: Promise<void>;
    try {
      running = options.stop(reason);
    } catch (error) {
      running = Promise.reject(error);
    }
    running.then(
      () => {
        disarm();
        log.info('stopped cleanly');
        markStopped();
      },
      (error: unknown) => {
        disarm();
        log.error(`shutdown failed; exiting with code ${FAILED_STOP_EXIT_CODE}`, { error });
        target.exit(FAILED_STOP_EXIT_CODE);
      },
    );
  };

  const listeners = (['SIGTERM', 'SIGINT'] as const).map((signal) => {
    const listener = (): void => {
      if (!requested) {
        request(`received ${signal}`);
        return;
      }
      const code = SIGNAL_EXIT_CODES[signal];
      log.warn(`received ${signal} again during shutdown: exiting now with code ${code} without finishing the batch`);
      target.exit(code);
    };
    target.on(signal, listener);
    return [signal, listener] as const;
  });

  return {
    request,
    get requested() {
      return requested;
    },
    stopped,
    dispose() {
      disarm();
      for (const [signal, listener] of listeners) target.off(signal, listener);
    },
  };
}

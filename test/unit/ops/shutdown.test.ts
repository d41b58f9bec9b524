import { EventEmitter } from 'node:events';
import { describe, expect, it, vi } from 'vitest';
import { createLogger } from '../../../connector/ops/logger.js';
import { installGracefulShutdown, type ShutdownProcess, type ShutdownSignal, type ShutdownTimers } from '../../../connector/ops/shutdown.js';

/** A process stand-in: signals are emitted by hand, exits recorded instead of taken. */
function fakeProcess() {
  const events = new EventEmitter();
  const exits: number[] = [];
  const target: ShutdownProcess & { send(signal: ShutdownSignal): void; exits: number[]; listeners(): number } = {
    on: (signal, listener) => events.on(signal, listener),
    off: (signal, listener) => events.off(signal, listener),
    exit: (code) => void exits.push(code),
    send: (signal) => void events.emit(signal),
    exits,
    listeners: () => events.listenerCount('SIGTERM') + events.listenerCount('SIGINT'),
  };
  return target;
}

/** Timers moved by hand: `advance(ms)` fires what falls due. */
function manualTimers() {
  let now = 0;
  const armed = new Set<{ at: number; callback: () => void }>();
  const timers: ShutdownTimers & { advance(ms: number): void; pending(): number } = {
    after(ms, callback) {
      const timer = { at: now + ms, callback };
      armed.add(timer);
      return () => armed.delete(timer);
    },
    advance(ms) {
      now += ms;
      for (const timer of [...armed]) {
        if (timer.at <= now) {
          armed.delete(timer);
          timer.callback();
        }
      }
    },
    pending: () => armed.size,
  };
  return timers;
}

function setup(stop: (reason: string) => Promise<void>, deadlineMs = 5_000) {
  const target = fakeProcess();
  const timers = manualTimers();
  const lines: string[] = [];
  const log = createLogger({ format: 'text', sink: (line) => lines.push(line), clock: { now: () => 0 } });
  const shutdown = installGracefulShutdown({ stop, deadlineMs, process: target, timers, log });
  return { target, timers, lines, shutdown };
}

/** A promise settled from outside, standing in for a stop still running. */
function pendingStop() {
  let finish = (): void => undefined;
  let fail = (_error: Error): void => undefined;
  const promise = new Promise<void>((resolve, reject) => {
    finish = resolve;
    fail = reject;
  });
  return { promise, finish: () => finish(), fail: (error: Error) => fail(error) };
}

describe('installGracefulShutdown', () => {
  it('calls stop once for SIGTERM, resolves stopped, disarms the deadline and does not exit', async () => {
    const stop = vi.fn(() => Promise.resolve());
    const { target, timers, lines, shutdown } = setup(stop);
    target.send('SIGTERM');
    shutdown.request('fatal error elsewhere');
    await shutdown.stopped;
    expect(stop).toHaveBeenCalledTimes(1);
    expect(stop).toHaveBeenCalledWith('received SIGTERM');
    expect(shutdown.requested).toBe(true);
    expect(timers.pending()).toBe(0);
    expect(target.exits).toEqual([]);
    expect(lines.join('')).toContain('received SIGTERM: finishing the current batch, committing and closing (deadline 5000 ms)');
    expect(lines.join('')).toContain('stopped cleanly');
  });

  it.each([
    ['SIGINT', 130],
    ['SIGTERM', 143],
  ] as const)('exits at once with %s a second time (code %i)', (signal, code) => {
    const running = pendingStop();
    const stop = vi.fn(() => running.promise);
    const { target, lines } = setup(stop);
    target.send('SIGINT');
    expect(target.exits).toEqual([]);
    target.send(signal);
    expect(stop).toHaveBeenCalledTimes(1);
    expect(target.exits).toEqual([code]);
    expect(lines.join('')).toContain(`received ${signal} again during shutdown: exiting now with code ${code}`);
  });

  it('exits with code 1 and a clear message when stop overruns the deadline', () => {
    const running = pendingStop();
    const { target, timers, lines } = setup(() => running.promise, 5_000);
    target.send('SIGTERM');
    timers.advance(4_999);
    expect(target.exits).toEqual([]);
    timers.advance(1);
    expect(target.exits).toEqual([1]);
    expect(lines.join('')).toContain('shutdown did not finish within 5000 ms after received SIGTERM; exiting with code 1');
  });

  it('exits with code 1 when stop fails, naming the error', async () => {
    const running = pendingStop();
    const { target, timers, lines, shutdown } = setup(() => running.promise);
    shutdown.request('end of demo');
    running.fail(new Error('commit refused'));
    await vi.waitFor(() => expect(target.exits).toEqual([1]), { timeout: 1_000 });
    expect(timers.pending()).toBe(0);
    expect(lines.join('')).toContain('shutdown failed; exiting with code 1');
    expect(lines.join('')).toContain('commit refused');
  });

  it('treats a stop that throws synchronously like one that rejects', async () => {
    const { target, shutdown } = setup(() => {
      throw new Error('not started');
    });
    shutdown.request('test');
    await vi.waitFor(() => expect(target.exits).toEqual([1]), { timeout: 1_000 });
  });

  it('removes its signal listeners and disarms the deadline on dispose', () => {
    const running = pendingStop();
    const { target, timers, shutdown } = setup(() => running.promise);
    expect(target.listeners()).toBe(2);
    target.send('SIGTERM');
    shutdown.dispose();
    expect(target.listeners()).toBe(0);
    timers.advance(60_000);
    expect(target.exits).toEqual([]);
  });
});

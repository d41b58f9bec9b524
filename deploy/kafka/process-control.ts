import { spawn } from 'node:child_process';
import { setTimeout as delay } from 'node:timers/promises';

export function isProcessAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    // EPERM: the pid exists but belongs to someone else; still alive.
    return (error as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/** Polls `isAlive` until it turns false or `timeoutMs` passes; true when the process is gone. */
export async function waitForExit(isAlive: () => boolean, timeoutMs: number): Promise<boolean> {
  const deadline = Date.now() + timeoutMs;
  while (isAlive()) {
    if (Date.now() >= deadline) return false;
    await delay(50);
  }
  return true;
}

/**
 * SIGTERM (the JVM runs Kafka's shutdown hook: controlled shutdown, logs closed), then
 * SIGKILL if it is still there after `graceMs`.
 */
export async function terminateProcess(pid: number, graceMs: number, isAlive: () => boolean = () => isProcessAlive(pid)): Promise<void> {
  if (!isAlive()) return;
  signal(pid, 'SIGTERM');
  if (await waitForExit(isAlive, graceMs)) return;
  signal(pid, 'SIGKILL');
  if (!(await waitForExit(isAlive, 5_000))) {
    throw new Error(`process ${pid} survived SIGKILL for 5 s; check it with \`ps -p ${pid}\``);
  }
}

function signal(pid: number, name: NodeJS.Signals): void {
  try {
    process.kill(pid, name);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code !== 'ESRCH') throw error;
  }
}

/**
 * The watchdog: a detached shell that checks once a second whether `ownerPid` still runs.
 * When the owner is gone — even killed with SIGKILL, which runs no cleanup code — it stops
 * `targetPid` (TERM, then KILL after `graceSeconds`) and removes `cleanupDir`. It exits on
 * its own once the target has ended, so a normal stop leaves nothing behind either.
 * Returns the watchdog's pid; it leads its own process group, so `process.kill(-pid)` ends it.
 */
export function spawnWatchdog(ownerPid: number, targetPid: number, cleanupDir: string, graceSeconds: number): number {
  const script = `
owner=$1 target=$2 dir=$3 grace=$4
while kill -0 "$owner" 2>/dev/null; do
  kill -0 "$target" 2>/dev/null || exit 0
  sleep 1
done
kill -TERM "$target" 2>/dev/null
waited=0
while kill -0 "$target" 2>/dev/null && [ "$waited" -lt "$grace" ]; do sleep 1; waited=$((waited + 1)); done
kill -KILL "$target" 2>/dev/null
rm -rf "$dir"
`;
  const child = spawn('sh', ['-c', script, 'raretide-kafka-watchdog', String(ownerPid), String(targetPid), cleanupDir, String(graceSeconds)], {
    detached: true,
    stdio: 'ignore',
  });
  child.unref();
  if (child.pid === undefined) throw new Error('could not start the broker watchdog (sh); is /bin/sh present?');
  return child.pid;
}

/** Ends the watchdog's whole process group (the shell and any `sleep` it is waiting in). */
export function stopWatchdog(watchdogPid: number): void {
  signal(-watchdogPid, 'SIGTERM');
}

/**
 * `raretide run` as a child process, started as test/support/spawned-worker.ts starts it, with what
 * the reliability scenarios need beyond it: extra environment variables (secrets for the security scenario), the tensor probe preloaded (the soak reads
 * tf.memory() of the worker, which /metrics does not carry), its standard output kept as well, and the
 * address of its metrics endpoint read from its log.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { once } from 'node:events';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

import { repositoryRoot, runWorkerArguments } from '../support/spawned-worker.js';
import { waitFor } from '../support/wait-for.js';
import type { CleanupStack } from './cleanup-stack.js';
import type { TensorProbeRequest, TensorProbeSample } from './tensor-probe.js';

const tensorProbe = fileURLToPath(new URL('./tensor-probe.ts', import.meta.url));

export interface WorkerProcessOptions {
  readonly configPath: string;
  readonly instanceId: string;
  /** Added to this process's environment. @default {} */
  readonly env?: Readonly<Record<string, string>>;
  /** Preload the tensor probe (and expose gc() to it) and open an IPC channel to ask it. @default false */
  readonly tensorProbe?: boolean;
  /** Where to keep the worker's log when it exits, as `<instanceId>-<pid>.log`. @default not kept */
  readonly logDir?: string | undefined;
}

export interface WorkerProcess {
  readonly child: ChildProcess;
  readonly pid: number;
  /** Everything written to standard error so far (the JSON log). */
  stderr(): string;
  /** Everything written to standard output so far (nothing, for `run`). */
  stdout(): string;
  /** The JSON log lines so far; lines that are not JSON are skipped. */
  logLines(): Record<string, unknown>[];
  readonly exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
  /** True until the process has exited. */
  running(): boolean;
  /** Throws, with the end of its log, once the worker has exited: for wait conditions that need it alive. */
  requireRunning(): void;
  /** Base URL of /metrics, /healthz, /readyz, from the worker's "serving …" log line. */
  opsUrl(timeoutMs?: number): Promise<string>;
  /** Asks the preloaded probe for tf.memory() and heap figures (only with `tensorProbe`). */
  probe(request?: TensorProbeRequest): Promise<TensorProbeSample>;
  /** Sends `signal` (if still running) and waits for the exit. */
  stop(signal: NodeJS.Signals): Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

/** Starts the worker; `cleanup` SIGKILLs it at the end if it is still running then. */
export function startWorkerProcess(options: WorkerProcessOptions, cleanup: CleanupStack): WorkerProcess {
  // Started as spawnWorker starts it (the deployed Node options included), so the suite judges what runs in production.
  const probe = options.tensorProbe === true ? { nodeFlags: ['--expose-gc'], preload: [tensorProbe] } : {};
  const child = spawn(process.execPath, runWorkerArguments(options.configPath, options.instanceId, probe), {
    cwd: repositoryRoot,
    env: { ...process.env, ...options.env },
    stdio: options.tensorProbe === true ? ['ignore', 'pipe', 'pipe', 'ipc'] : ['ignore', 'pipe', 'pipe'],
  });
  let stderr = '';
  let stdout = '';
  child.stderr!.setEncoding('utf8').on('data', (text: string) => (stderr += text));
  child.stdout!.setEncoding('utf8').on('data', (text: string) => (stdout += text));
  const exited = once(child, 'exit').then(async ([code, signal]) => {
    if (options.logDir !== undefined) await writeFile(join(options.logDir, `${options.instanceId}-${child.pid}.log`), stderr);
    return { code: code as number | null, signal: signal as NodeJS.Signals | null };
  });
  const running = () => child.exitCode === null && child.signalCode === null;
  cleanup.defer(`worker ${options.instanceId} (pid ${child.pid})`, async () => {
    if (running()) {
      child.kill('SIGKILL');
      await exited;
    }
  });
  const logLines = () => stderr.split('\n').flatMap((line) => {
    if (!line.startsWith('{')) return [];
    try {
      return [JSON.parse(line) as Record<string, unknown>];
    } catch {
      return [];
    }
  });
  return {
    child,
    pid: child.pid as number,
    stderr: () => stderr,
    stdout: () => stdout,
    logLines,
    exited,
    running,
    requireRunning: () => {
      if (!running()) throw new Error(`worker ${options.instanceId} exited (${child.exitCode ?? child.signalCode}); its log ends:\n${stderr.slice(-1_500)}`);
    },
    opsUrl: (timeoutMs = 60_000) =>
      waitFor(
        () => {
          if (!running()) throw new Error(`worker ${options.instanceId} exited before serving metrics:\n${stderr.slice(-2_000)}`);
          const line = logLines().find((entry) => String(entry.msg).startsWith('serving /metrics'));
          return line === undefined ? undefined : `http://${String(line.host)}:${String(line.port)}`;
        },
        { what: `worker ${options.instanceId} to serve metrics`, timeoutMs, intervalMs: 100 },
      ),
    probe: (request = 'sample') => askProbe(child, request),
    stop: async (signal) => {
      if (running()) child.kill(signal);
      return exited;
    },
  };
}

function askProbe(child: ChildProcess, request: TensorProbeRequest): Promise<TensorProbeSample> {
  if (child.send === undefined || !child.connected) return Promise.reject(new Error('the worker has no tensor probe channel (start it with tensorProbe: true)'));
  return new Promise((resolve, reject) => {
    const timer = setTimeout(() => {
      child.off('message', answer);
      reject(new Error('the tensor probe did not answer within 10 s'));
    }, 10_000);
    const answer = (message: unknown) => {
      clearTimeout(timer);
      child.off('message', answer);
      resolve(message as TensorProbeSample);
    };
    child.on('message', answer);
    child.send(request);
  });
}

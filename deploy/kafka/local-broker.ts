import { spawn, type ChildProcess } from 'node:child_process';
import { closeSync, openSync } from 'node:fs';
import { mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

import { kafkaAssetsDir } from './assets.js';
import { defaultJarCacheDir, ensureKafkaJars } from './jar-cache.js';
import { probeMetadata } from './metadata-probe.js';
import { findFreePorts, waitForPort } from './network.js';
import { spawnWatchdog, stopWatchdog, terminateProcess } from './process-control.js';
import { randomClusterId, renderServerProperties } from './server-properties.js';

export interface LocalBrokerOptions {
  /**
   * Directory holding (or receiving, on first use) the broker jars.
   * @default RARETIDE_KAFKA_CACHE, else `${XDG_CACHE_HOME:-~/.cache}/raretide/kafka-4.1.1`
   */
  jarCacheDir?: string;
  /**
   * The process whose death must take the broker down with it (watched by a detached
   * watchdog, so this holds even after SIGKILL). `null` leaves the broker running until
   * `stop()` or a `kill` — what `cli.ts up` wants.
   * @default process.pid
   */
  ownerPid?: number | null;
  /**
   * How long start-up may take, from the JVM launch to a Metadata answer.
   * @default 120000
   */
  startTimeoutMs?: number;
  /**
   * How long the broker gets to shut down after SIGTERM before SIGKILL.
   * @default 15000
   */
  stopGraceMs?: number;
  /**
   * Where progress lines go.
   * @default a line on stderr
   */
  log?: (line: string) => void;
}

export interface StartupTimings {
  jarsMs: number;
  formatMs: number;
  readyMs: number;
}

export interface LocalBroker {
  /** Bootstrap address for clients, e.g. `127.0.0.1:40123`. */
  brokers: string;
  /** The broker JVM's pid (a new one after `startAgain`). */
  readonly pid: number;
  /** The fresh temp dir holding server.properties, the KRaft log dir and broker.log. */
  runDir: string;
  logFile: string;
  timings: StartupTimings;
  /** Stops the JVM (TERM, then KILL after the grace period) and removes `runDir`. */
  stop(): Promise<void>;
  /**
   * Stops the JVM as `stop` does but keeps `runDir` (data, properties, log), so `startAgain` can bring
   * the same broker back: an outage for clients, as when a broker restarts in a cluster.
   */
  stopKeepingData(): Promise<void>;
  /**
   * After `stopKeepingData`: starts the JVM again on the same ports and data dir and resolves once a
   * client gets Metadata from it; returns how long that took in milliseconds.
   */
  startAgain(): Promise<number>;
}

/** Marks the broker's command line, so `cli.ts down` can tell our JVM from a reused pid. */
export const RUN_DIR_PROPERTY = 'raretide.kafka.runDir';

const ATTEMPTS_ON_PORT_CLASH = 3;

/**
 * Starts a single-node Apache Kafka (KRaft, broker+controller) on free ports of 127.0.0.1,
 * from jars fetched once with Maven, and resolves when a client gets Metadata from it.
 */
export async function startLocalBroker(options: LocalBrokerOptions = {}): Promise<LocalBroker> {
  const log = options.log ?? ((line: string) => process.stderr.write(`[raretide kafka] ${line}\n`));
  const jarsStarted = Date.now();
  const jarDir = await ensureKafkaJars(options.jarCacheDir ?? defaultJarCacheDir(), log);
  const jarsMs = Date.now() - jarsStarted;
  for (let attempt = 1; ; attempt++) {
    try {
      return await startOnFreshPorts(jarDir, jarsMs, options);
    } catch (error) {
      // Another process can take a free port between our probe and the JVM binding it.
      if (!(error instanceof PortClashError) || attempt >= ATTEMPTS_ON_PORT_CLASH) throw error;
      log(`port taken before the broker could bind it; retrying on new ports (attempt ${attempt + 1})`);
    }
  }
}

class PortClashError extends Error {}

async function startOnFreshPorts(jarDir: string, jarsMs: number, options: LocalBrokerOptions): Promise<LocalBroker> {
  const ownerPid = options.ownerPid === undefined ? process.pid : options.ownerPid;
  const startTimeoutMs = options.startTimeoutMs ?? 120_000;
  const stopGraceMs = options.stopGraceMs ?? 15_000;

  const runDir = await mkdtemp(join(tmpdir(), 'raretide-kafka-'));
  const logFile = join(runDir, 'broker.log');
  const [clientPort, controllerPort] = await findFreePorts(2) as [number, number];
  const brokers = `127.0.0.1:${clientPort}`;
  const propertiesFile = join(runDir, 'server.properties');
  await mkdir(join(runDir, 'tmp'));
  await writeFile(propertiesFile, renderServerProperties({ clientPort, controllerPort, logDir: join(runDir, 'data') }));

  const formatStarted = Date.now();
  try {
    await formatStorage(jarDir, runDir, propertiesFile);
  } catch (error) {
    await rm(runDir, { recursive: true, force: true });
    throw error;
  }
  const formatMs = Date.now() - formatStarted;

  let jvm: ChildProcess | undefined;
  let watchdogPid: number | undefined;
  const jvmAlive = (): boolean => jvm !== undefined && jvm.exitCode === null && jvm.signalCode === null;

  /** Launches the JVM (and its watchdog) and waits until it answers Metadata; stops it if it does not. */
  const launch = async (): Promise<number> => {
    const started = Date.now();
    const launched = launchBroker(jarDir, runDir, propertiesFile, logFile);
    jvm = launched;
    watchdogPid = ownerPid === null ? undefined : spawnWatchdog(ownerPid, launched.pid as number, runDir, Math.ceil(stopGraceMs / 1000));
    try {
      const deadline = Date.now() + startTimeoutMs;
      await waitForPort('127.0.0.1', clientPort, deadline, () =>
        jvmAlive() ? undefined : `the broker JVM exited (code ${launched.exitCode ?? launched.signalCode}) before opening ${brokers}`);
      await probeMetadata(brokers, Math.max(1_000, deadline - Date.now()));
    } catch (error) {
      const logTail = await readTail(logFile);
      await stop();
      const message = `local Kafka broker did not become ready: ${(error as Error).message}\n--- last lines of broker.log ---\n${logTail}`;
      throw logTail.includes('Address already in use') ? new PortClashError(message) : new Error(message);
    }
    return Date.now() - started;
  };

  const stopJvm = async (): Promise<void> => {
    if (watchdogPid !== undefined) stopWatchdog(watchdogPid);
    watchdogPid = undefined;
    if (jvm?.pid !== undefined) await terminateProcess(jvm.pid, stopGraceMs, jvmAlive);
  };

  let stopped = false;
  const stop = async (): Promise<void> => {
    if (stopped) return;
    stopped = true;
    await stopJvm();
    await rm(runDir, { recursive: true, force: true });
  };

  const readyMs = await launch();
  return {
    brokers,
    get pid() {
      return jvm?.pid as number;
    },
    runDir,
    logFile,
    timings: { jarsMs, formatMs, readyMs },
    stop,
    stopKeepingData: async () => {
      if (stopped) throw new Error(`the broker at ${brokers} was stopped for good; start a new one`);
      await stopJvm();
    },
    startAgain: async () => {
      if (stopped) throw new Error(`the broker at ${brokers} was stopped for good; start a new one`);
      if (jvmAlive()) throw new Error(`the broker at ${brokers} is still running (pid ${jvm?.pid}); call stopKeepingData first`);
      return launch();
    },
  };
}

function javaArgs(jarDir: string, runDir: string, heap: string): string[] {
  return [
    `-Xmx${heap}`,
    '-Djava.awt.headless=true',
    `-Dlog4j2.configurationFile=${join(kafkaAssetsDir(), 'log4j2.yaml')}`,
    // Native zstd/snappy unpack into these; keep them in the run dir (removed on stop).
    `-Djava.io.tmpdir=${join(runDir, 'tmp')}`,
    `-DZstdTempFolder=${join(runDir, 'tmp')}`,
    `-Dorg.xerial.snappy.tempdir=${join(runDir, 'tmp')}`,
    `-D${RUN_DIR_PROPERTY}=${runDir}`,
    '-cp', join(jarDir, '*'),
  ];
}

/** `kafka-storage format` with a fresh cluster id; static voters need no `--standalone`. */
function formatStorage(jarDir: string, runDir: string, propertiesFile: string): Promise<void> {
  // A short-lived JVM: the C1 compiler alone starts faster.
  const args = ['-XX:TieredStopAtLevel=1', ...javaArgs(jarDir, runDir, '256m'),
    'kafka.tools.StorageTool', 'format', '-t', randomClusterId(), '-c', propertiesFile];
  return new Promise((resolve, reject) => {
    const child = spawn('java', args, { stdio: ['ignore', 'pipe', 'pipe'] });
    let output = '';
    child.stdout.on('data', (chunk: Buffer) => { output += chunk.toString(); });
    child.stderr.on('data', (chunk: Buffer) => { output += chunk.toString(); });
    child.on('error', (error) => reject(new Error(`could not run java: ${error.message}; install a Java 17+ runtime`)));
    child.on('exit', (code) => {
      if (code === 0) resolve();
      else reject(new Error(`formatting KRaft storage failed (exit ${code}):\n${output.slice(-4000)}`));
    });
  });
}

/**
 * The broker JVM, in its own session (detached) so a terminal's Ctrl-C or hang-up does not
 * reach it directly — its lifetime is governed by `stop()`, the watchdog, or `cli.ts down`.
 * Output goes to a file, not a pipe, so it never blocks on a reader that has gone away.
 */
function launchBroker(jarDir: string, runDir: string, propertiesFile: string, logFile: string): ChildProcess {
  const logFd = openSync(logFile, 'a');
  try {
    const child = spawn('java', ['-Xms256m', '-XX:+UseG1GC', '-XX:+ExitOnOutOfMemoryError',
      ...javaArgs(jarDir, runDir, '512m'), 'kafka.Kafka', propertiesFile], {
      detached: true,
      stdio: ['ignore', logFd, logFd],
    });
    child.unref();
    if (child.pid === undefined) {
      // The spawn failure also arrives as an 'error' event; the throw below reports it.
      child.once('error', () => undefined);
      throw new Error('could not start java for the Kafka broker; install a Java 17+ runtime');
    }
    return child;
  } finally {
    closeSync(logFd);
  }
}

async function readTail(file: string, lines = 30): Promise<string> {
  try {
    return (await readFile(file, 'utf8')).split('\n').slice(-lines).join('\n');
  } catch {
    return '(no broker.log)';
  }
}

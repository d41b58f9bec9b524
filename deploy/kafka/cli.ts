#!/usr/bin/env node
/**
 * Local Kafka broker for trying raretide without a cluster of one's own.
 *   up      start a broker (if none is running) and print its bootstrap address on stdout
 *   down    stop it and remove its data
 *   status  print the address and exit 0 if running, else exit 1
 */
import { rm } from 'node:fs/promises';

import { startLocalBroker } from './local-broker.js';
import { terminateProcess } from './process-control.js';
import { isRecordedBrokerRunning, readRunState, removeRunState, runStateFile, writeRunState } from './run-state.js';

const USAGE = 'usage: kafka-local up|down|status';
const STOP_GRACE_MS = 15_000;

function info(line: string): void {
  process.stderr.write(`[raretide kafka] ${line}\n`);
}

async function up(stateFile: string): Promise<number> {
  const existing = await readRunState(stateFile);
  if (existing && (await isRecordedBrokerRunning(existing))) {
    info(`already running (pid ${existing.pid}); \`down\` stops it`);
    process.stdout.write(`${existing.brokers}\n`);
    return 0;
  }
  const broker = await startLocalBroker({ ownerPid: null, log: info });
  await writeRunState(stateFile, {
    brokers: broker.brokers,
    pid: broker.pid,
    runDir: broker.runDir,
    logFile: broker.logFile,
    startedAt: new Date().toISOString(),
  });
  info(`broker ready in ${broker.timings.formatMs + broker.timings.readyMs} ms (pid ${broker.pid}, log ${broker.logFile}); use KAFKA_BROKERS=${broker.brokers}`);
  process.stdout.write(`${broker.brokers}\n`);
  return 0;
}

async function down(stateFile: string): Promise<number> {
  const state = await readRunState(stateFile);
  if (!state) {
    info('no local broker recorded; nothing to stop');
    return 0;
  }
  if (await isRecordedBrokerRunning(state)) {
    await terminateProcess(state.pid, STOP_GRACE_MS);
    info(`stopped broker pid ${state.pid}`);
  } else {
    info(`broker pid ${state.pid} was no longer running; cleaning up`);
  }
  await rm(state.runDir, { recursive: true, force: true });
  await removeRunState(stateFile);
  return 0;
}

async function status(stateFile: string): Promise<number> {
  const state = await readRunState(stateFile);
  if (state && (await isRecordedBrokerRunning(state))) {
    info(`running since ${state.startedAt} (pid ${state.pid}, log ${state.logFile})`);
    process.stdout.write(`${state.brokers}\n`);
    return 0;
  }
  info('not running');
  return 1;
}

async function main(command: string | undefined): Promise<number> {
  const stateFile = runStateFile();
  switch (command) {
    case 'up': return up(stateFile);
    case 'down': return down(stateFile);
    case 'status': return status(stateFile);
    default:
      process.stderr.write(`${USAGE}\n`);
      return 2;
  }
}

main(process.argv[2]).then(
  (code) => { process.exitCode = code; },
  (error: unknown) => {
    process.stderr.write(`[raretide kafka] ${(error as Error).message}\n`);
    process.exitCode = 1;
  },
);

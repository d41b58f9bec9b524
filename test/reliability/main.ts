/**
 * `npm run reliability`: the worker under faults, load and bad input, on a real broker on 127.0.0.1.
 * Prints a table of every scenario with its counts and timings; exits 1 if any scenario failed.
 *
 *   --short         the CI sizes (a few minutes) instead of the full ones (~10 min soak and more)
 *   --only <name>   one scenario (repeatable): kill-restart, broker-restart, scale-out, bad-input,
 *                   soak, bad-files, security
 *   --seed <n>      seed of every random choice (default 20261202)
 *   --logs <dir>    keep every worker's log there, as <instance id>-<pid>.log (and the soak's samples)
 *
 * The broker: KAFKA_BROKERS when set, else a local one from deploy/kafka (stopped at the end).
 * The broker-restart scenario always starts a broker of its own, which it can stop and start.
 */
import { mkdir } from 'node:fs/promises';
import { resolve } from 'node:path';
import { parseArgs } from 'node:util';

import { startLocalBroker, type LocalBroker } from '../../deploy/kafka/local-broker.js';
import { renderTable } from './results-table.js';
import type { ScenarioRow } from './scenario-row.js';
import { SCENARIOS } from './scenarios.js';
import { prepareSuite } from './suite-context.js';

const DEFAULT_SEED = 20_261_202;

function options(): { short: boolean; only: string[]; seed: number; logs: string | undefined } {
  const { values } = parseArgs({
    options: { short: { type: 'boolean', default: false }, only: { type: 'string', multiple: true, default: [] }, seed: { type: 'string' }, logs: { type: 'string' } },
  });
  const unknown = values.only.filter((name) => !SCENARIOS.some((scenario) => scenario.name === name));
  if (unknown.length > 0) throw new Error(`--only ${unknown.join(', ')}: no such scenario; choose from ${SCENARIOS.map((scenario) => scenario.name).join(', ')}`);
  const seed = values.seed === undefined ? DEFAULT_SEED : Number(values.seed);
  if (!Number.isSafeInteger(seed) || seed < 0) throw new Error(`--seed must be a whole number ≥ 0, got \`${values.seed}\``);
  return { short: values.short, only: values.only, seed, logs: values.logs === undefined ? undefined : resolve(values.logs) };
}

function progress(line: string): void {
  process.stderr.write(`[reliability ${new Date().toISOString().slice(11, 19)}] ${line}\n`);
}

async function main(): Promise<number> {
  const { short, only, seed, logs } = options();
  if (logs !== undefined) await mkdir(logs, { recursive: true });
  const chosen = SCENARIOS.filter((scenario) => only.length === 0 || only.includes(scenario.name));
  let localBroker: LocalBroker | undefined;
  const rows: ScenarioRow[] = [];
  try {
    let brokers = process.env.KAFKA_BROKERS?.trim();
    if (!brokers) {
      localBroker = await startLocalBroker({ log: progress });
      brokers = localBroker.brokers;
    }
    progress(`broker ${brokers}; ${short ? 'short' : 'full'} sizes; seed ${seed}`);
    const suite = await prepareSuite({
      brokers,
      seed,
      progress,
      startRestartableBroker: chosen.some((scenario) => scenario.name === 'broker-restart'),
      ...(logs === undefined ? {} : { logDir: logs }),
    });
    try {
      for (const scenario of chosen) {
        progress(`scenario ${scenario.name} …`);
        const row = await scenario.run(suite.context, short ? 'short' : 'full');
        progress(`scenario ${scenario.name}: ${row.pass ? 'pass' : 'FAIL'} in ${row.seconds} s`);
        rows.push(row);
      }
    } finally {
      await suite.close();
    }
  } finally {
    await localBroker?.stop();
  }
  process.stdout.write(`\nraretide reliability (${short ? 'short' : 'full'} sizes, seed ${seed})\n${renderTable(rows)}`);
  return rows.every((row) => row.pass) ? 0 : 1;
}

main().then(
  (code) => {
    process.exitCode = code;
  },
  (error: unknown) => {
    process.stderr.write(`reliability suite failed to run: ${error instanceof Error ? error.stack ?? error.message : String(error)}\n`);
    process.exitCode = 1;
  },
);

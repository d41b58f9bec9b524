/**
 * The reliability suite at its short sizes, inside `npm test`: the same scenario functions as
 * `npm run reliability` (test/reliability/), on the broker the integration setup provides, except
 * scenario 2, which stops and starts a broker of its own (started ahead, while scenario 1 runs).
 * Each scenario is one test; its row of the table is printed, and its failed checks are the failure.
 */
import { mkdir } from 'node:fs/promises';
import { resolve } from 'node:path';

import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import { renderTable } from '../reliability/results-table.js';
import { SCENARIOS } from '../reliability/scenarios.js';
import { prepareSuite, type PreparedSuite } from '../reliability/suite-context.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';

/** The default seed of `npm run reliability`, so a CI failure repeats with `--short --seed 20261202`. */
const SEED = 20_261_202;
/** Where to keep every worker's log, as `--logs` does; unset keeps none. */
const LOG_DIR = process.env.RARETIDE_RELIABILITY_LOGS?.trim() || undefined;

let suite: PreparedSuite | undefined;

beforeAll(async () => {
  const logDir = LOG_DIR === undefined ? undefined : resolve(LOG_DIR);
  if (logDir !== undefined) await mkdir(logDir, { recursive: true });
  suite = await prepareSuite({
    brokers: kafkaBrokers(),
    seed: SEED,
    progress: (line) => console.log(`[reliability] ${line}`),
    startRestartableBroker: true,
    ...(logDir === undefined ? {} : { logDir }),
  });
}, 120_000);

afterAll(async () => {
  await suite?.close();
}, 60_000);

describe('reliability, short sizes', () => {
  for (const scenario of SCENARIOS) {
    it(scenario.name, async () => {
      const row = await scenario.run(suite!.context, 'short');
      console.log(renderTable([row]));
      expect(row.failures).toEqual([]);
    }, 300_000);
  }
});

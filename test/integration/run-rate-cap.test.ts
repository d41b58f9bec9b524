/**
 * The rate cap of `raretide run` on the real broker. All input is on the topic before the worker starts,
 * so the balance wants its synthetic records far faster than the cap allows (well over 10× the steady
 * rate). Synthetic records copy their source record's timestamp, so the output topic is created with
 * `message.timestamp.type=LogAppendTime`: the broker then stamps each record with its append time, and
 * the per-second counts are counts by delivery time.
 */
import type { Message } from 'node-rdkafka';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import { kafkaBrokers } from '../support/kafka-brokers.js';
import { fitSorterModel, makeWorkspace, readTagged, sorterEvents, startInProcess, writeEvents, writeRunConfig, writeSorterSchema } from '../support/run-worker-scenario.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';

const brokers = kafkaBrokers();
const PER_SECOND = 30;
const BURST = 10;
const TARGETS = { jam: 0.15, misroute: 0.15 };
const createdTopics: string[] = [];
let workspace: Awaited<ReturnType<typeof makeWorkspace>>;
let schemaFile = '';
let modelDir = '';

beforeAll(async () => {
  workspace = await makeWorkspace('run-rate-cap');
  schemaFile = await writeSorterSchema(workspace.dir);
  modelDir = `${workspace.dir}/model`;
  await fitSorterModel(modelDir);
});

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
  await workspace?.remove();
});

async function capScenario(prefix: string, whenExceeded: 'wait' | 'thin') {
  const source = await createUniqueTopic(brokers, { prefix: `${prefix}-src`, partitions: 1 });
  const output = await createUniqueTopic(brokers, { prefix: `${prefix}-out`, partitions: 1, config: { 'message.timestamp.type': 'LogAppendTime' } });
  const topics = { source, output, deadLetter: uniqueName(`${prefix}-dlq`), group: uniqueName(`${prefix}-group`) };
  createdTopics.push(source, output, topics.deadLetter, `raretide-state.${topics.group}`);
  const written = await writeEvents(brokers, source, sorterEvents(1_000, { jam: 0.1, misroute: 0.1 }, 5), 1);
  const config = await writeRunConfig(workspace.dir, prefix, {
    brokers,
    topics,
    schemaFile,
    modelDir,
    targets: TARGETS,
    rateCap: { perSecond: PER_SECOND, burst: BURST, whenExceeded },
  });
  const run = await startInProcess(config, `${prefix}-0`);
  await waitFor(() => run.worker.counters.records >= written.length, { what: 'every record processed', timeoutMs: 60_000 });
  const outcome = await run.stop();
  const synthetic = (await readTagged(brokers, output, 1)).filter((entry) => entry.tag.kind === 'synthetic');
  return { outcome, synthetic, written };
}

/** Synthetic records per second of append time. */
function perSecond(messages: readonly Message[]): Map<number, number> {
  const counts = new Map<number, number>();
  for (const { timestamp } of messages) counts.set(Math.floor(timestamp! / 1000), (counts.get(Math.floor(timestamp! / 1000)) ?? 0) + 1);
  return counts;
}

describe('raretide run under a rate cap', () => {
  it('wait: no second holds more than perSecond + burst synthetic records, and every rare record is served', async () => {
    const { outcome, synthetic } = await capScenario('run-cap-wait', 'wait');
    const { counters } = outcome;
    // Far more wanted than one second allows: the first batch alone wants several seconds' worth.
    expect(synthetic.length).toBeGreaterThan(3 * (PER_SECOND + BURST));
    expect(synthetic).toHaveLength(counters.total('synthetic'));
    const counts = perSecond(synthetic.map((entry) => entry.message));
    // The token bucket bound: at most burst + perSecond·τ tokens in τ seconds (connector/pipeline/rate-limit.ts).
    expect(Math.max(...counts.values())).toBeLessThanOrEqual(PER_SECOND + BURST);
    expect(counts.size).toBeGreaterThanOrEqual(Math.floor((synthetic.length - BURST) / PER_SECOND));
    expect(counters.rateWaitMs).toBeGreaterThan(1_000);
    // Nothing skipped: nothing thinned, and the balance still reached both targets.
    expect(counters.total('thinned')).toBe(0);
    for (const share of outcome.shares.filter((entry) => entry.target !== undefined)) expect(share.status).toBe('met');
  }, 90_000);

  it('thin: makes only what the bucket allows and counts the rest as thinned', async () => {
    const { outcome, synthetic } = await capScenario('run-cap-thin', 'thin');
    const { counters } = outcome;
    expect(synthetic).toHaveLength(counters.total('synthetic'));
    expect(counters.total('thinned')).toBeGreaterThan(0);
    expect(Math.max(...perSecond(synthetic.map((entry) => entry.message)).values())).toBeLessThanOrEqual(PER_SECOND + BURST);
    expect(counters.rateWaitMs).toBe(0);
  }, 90_000);
});

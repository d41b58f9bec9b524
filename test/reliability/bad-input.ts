/**
 * Scenario 4: fuzzed payloads mixed into valid traffic, at seeded positions. Every payload the oracle
 * (fuzz-payloads.ts) refuses must land in the dead-letter topic, once, with its bytes and a reason and
 * code in headers; every record it accepts — all valid traffic, and any fuzz that happens to decode —
 * must be served (passed through to the output, originals included); nothing may be in both or neither;
 * and the worker must stay up all along: no restart of its session, /healthz 200, exit 0 on SIGTERM.
 */
import type { Message } from 'node-rdkafka';

import { DEAD_LETTER_HEADERS } from '../../connector/pipeline/dead-letter.js';
import { PROVENANCE_HEADERS } from '../../connector/pipeline/provenance.js';
import { headerText, readWholeTopic } from '../support/adapter-loop.js';
import { connectProducer, flushAndDisconnect } from '../support/kafka-clients.js';
import { produceWithBackpressure } from '../support/produce-with-backpressure.js';
import { metricSamples, readTagged, sorterEvents, sorterSchema, sumOf } from '../support/run-worker-scenario.js';
import { seededRandom } from '../support/seeded-random.js';
import { waitFor } from '../support/wait-for.js';
import { CleanupStack } from './cleanup-stack.js';
import { fuzzPayloads, shouldServe, type FuzzKind } from './fuzz-payloads.js';
import { RowRecorder, type ScenarioRow, type ScenarioSize } from './scenario-row.js';
import { createScenarioTopics } from './scenario-topics.js';
import { writeScenarioConfig, type SuiteContext } from './suite-context.js';
import { TopicProgress } from './topic-progress.js';
import { startWorkerProcess } from './worker-process.js';

const SIZES: Record<ScenarioSize, { readonly fuzzed: number; readonly valid: number }> = {
  full: { fuzzed: 10_000, valid: 10_000 },
  short: { fuzzed: 500, valid: 1_500 },
};
const PARTITIONS = 3;
/** The classes the suite's model knows (fitted on ok, jam and misroute). */
const MODEL_CLASSES = ['ok', 'jam', 'misroute'];

interface SourcePayload {
  readonly value: Buffer;
  /** The fuzz kind, or undefined for valid traffic. */
  readonly kind: FuzzKind | undefined;
}

export async function badInput(context: SuiteContext, size: ScenarioSize): Promise<ScenarioRow> {
  const { fuzzed, valid } = SIZES[size];
  const row = new RowRecorder('4 bad input', `${fuzzed.toLocaleString('en-US')} fuzzed payloads in valid traffic: each refused one dead-lettered with a reason, all valid traffic served, worker stays up`);
  const cleanup = new CleanupStack();
  try {
    const { brokers } = context;
    const topics = await createScenarioTopics(brokers, 'rel-fuzz', PARTITIONS, cleanup);
    const progress = await TopicProgress.open(brokers, cleanup);
    const payloads = mixed(context.seed + 30, valid, fuzzed);
    await writePayloads(brokers, topics.source, payloads);
    const config = await writeScenarioConfig(context, 'bad-input', {
      topics,
      targets: { jam: 0.06, misroute: 0.06 },
      includeOriginals: true,
      seed: context.seed,
    });

    const worker = startWorkerProcess({ configPath: config, instanceId: 'fuzz-0', logDir: context.logDir }, cleanup);
    const opsUrl = await worker.opsUrl();
    await waitFor(
      async () => {
        worker.requireRunning();
        return (await progress.committed(topics.group, topics.source, PARTITIONS)) === payloads.length;
      },
      { what: 'the worker to commit every source record', timeoutMs: 180_000, intervalMs: 250 },
    );
    row.check('the worker is still running at the end', worker.running());
    const health = (await fetch(`${opsUrl}/healthz`)).status;
    row.check('/healthz answers 200', health === 200, `${health}`);
    const metricsText = await (await fetch(`${opsUrl}/metrics`)).text();
    const reconnects = worker.logLines().filter((line) => String(line.msg).includes('; reconnecting in ')).length;
    row.check('no session restarted', reconnects === 0, `${reconnects} reconnects`);
    const exit = await worker.stop('SIGTERM');
    row.check('exits 0 on SIGTERM', exit.code === 0, JSON.stringify(exit));

    const deadLetters = await readWholeTopic(brokers, topics.deadLetter, PARTITIONS);
    const output = await readTagged(brokers, topics.output, PARTITIONS);
    const served = countByPosition(output.filter(({ tag }) => tag.kind === 'original').map(({ tag }) => ({ partition: tag.source.partition, offset: tag.source.offset })));
    const dead = countByPosition(deadLetters.map(sourcePositionOf));
    const codes = new Map<string, number>();
    let withoutReason = 0;
    let changedBytes = 0;
    for (const message of deadLetters) {
      const code = headerText(message.headers, DEAD_LETTER_HEADERS.code) ?? '(none)';
      codes.set(code, (codes.get(code) ?? 0) + 1);
      if ((headerText(message.headers, DEAD_LETTER_HEADERS.reason) ?? '').length === 0 || code === '(none)') withoutReason += 1;
      const { partition, offset } = sourcePositionOf(message);
      const source = payloads[Number(offset) * PARTITIONS + partition];
      if (source === undefined || !source.value.equals(message.value ?? Buffer.alloc(0))) changedBytes += 1;
    }

    const tally = { refused: 0, refusedDead: 0, refusedServed: 0, refusedLost: 0, acceptedServed: 0, acceptedDead: 0, acceptedLost: 0, repeated: 0, fuzzAccepted: 0 };
    const disagreements: string[] = [];
    for (const [index, payload] of payloads.entries()) {
      const key = `${index % PARTITIONS}:${Math.floor(index / PARTITIONS)}`;
      const timesDead = dead.get(key) ?? 0;
      const timesServed = served.get(key) ?? 0;
      if (timesDead + timesServed > 1) tally.repeated += 1;
      if (shouldServe(payload.value, MODEL_CLASSES)) {
        if (payload.kind !== undefined) tally.fuzzAccepted += 1;
        if (timesServed > 0) tally.acceptedServed += 1;
        else if (timesDead > 0) tally.acceptedDead += 1;
        else tally.acceptedLost += 1;
        if (timesServed === 0 && disagreements.length < 3) disagreements.push(`${payload.kind ?? 'valid'} at ${key} (${payload.value.toString('hex').slice(0, 40)}) not served`);
      } else {
        tally.refused += 1;
        if (timesDead > 0 && timesServed === 0) tally.refusedDead += 1;
        else if (timesServed > 0) tally.refusedServed += 1;
        else tally.refusedLost += 1;
        if (timesDead === 0 && disagreements.length < 3) disagreements.push(`${payload.kind} at ${key} (${payload.value.toString('hex').slice(0, 40)}) not dead-lettered`);
      }
    }
    row.count('fuzzed', fuzzed);
    row.count('valid', valid);
    row.count('fuzz that decodes', tally.fuzzAccepted);
    row.count('dead letters', deadLetters.length);
    row.count('served', tally.acceptedServed);
    row.count('codes', [...codes].sort((a, b) => b[1] - a[1]).map(([code, count]) => `${code} ${count}`).join(', '));
    row.check('every refused payload dead-lettered, none served', tally.refusedDead === tally.refused, `${tally.refusedServed} served, ${tally.refusedLost} lost; ${disagreements.join('; ')}`);
    row.check('every accepted record served', tally.acceptedDead + tally.acceptedLost === 0, `${tally.acceptedDead} dead-lettered, ${tally.acceptedLost} lost; ${disagreements.join('; ')}`);
    row.check('nothing handled twice', tally.repeated === 0, `${tally.repeated}`);
    row.check('every dead letter has a code and a reason', withoutReason === 0, `${withoutReason} without`);
    row.check('every dead letter carries its source bytes unchanged', changedBytes === 0, `${changedBytes} changed`);
    const counted = sumOf(metricSamples(metricsText, 'raretide_dead_letter_total').values());
    row.check('raretide_dead_letter_total = dead letters', counted === deadLetters.length, `${counted}`);
  } catch (error) {
    row.fail(error);
  } finally {
    for (const problem of await cleanup.close()) row.fail(problem);
  }
  return row.finish();
}

/** Valid sorter events and fuzzed payloads, shuffled together with the seeded PRNG (Fisher–Yates). */
function mixed(seed: number, valid: number, fuzzed: number): SourcePayload[] {
  const payloads: SourcePayload[] = [
    ...sorterEvents(valid, { jam: 0.02, misroute: 0.02 }, seed).map((event) => ({ value: sorterSchema.type.toBuffer(event), kind: undefined })),
    ...fuzzPayloads(fuzzed, seed + 1),
  ];
  const random = seededRandom(seed + 2);
  for (let index = payloads.length - 1; index > 0; index--) {
    const other = Math.floor(random() * (index + 1));
    [payloads[index], payloads[other]] = [payloads[other]!, payloads[index]!];
  }
  return payloads;
}

/** Writes payload i to partition i mod P (offset ⌊i / P⌋), as writeEvents lays records out. */
async function writePayloads(brokers: string, topic: string, payloads: readonly SourcePayload[]): Promise<void> {
  const producer = await connectProducer({ 'metadata.broker.list': brokers, 'enable.idempotence': true });
  try {
    for (const [index, { value }] of payloads.entries()) {
      await produceWithBackpressure(producer, { topic, partition: index % PARTITIONS, value, key: `payload-${index}`, timestamp: Date.now() });
    }
  } finally {
    await flushAndDisconnect(producer);
  }
}

function sourcePositionOf(message: Message): { partition: number; offset: bigint } {
  return {
    partition: Number(headerText(message.headers, PROVENANCE_HEADERS.sourcePartition)),
    offset: BigInt(headerText(message.headers, PROVENANCE_HEADERS.sourceOffset) ?? '-1'),
  };
}

function countByPosition(positions: readonly { partition: number; offset: bigint }[]): Map<string, number> {
  const counts = new Map<string, number>();
  for (const { partition, offset } of positions) counts.set(`${partition}:${offset}`, (counts.get(`${partition}:${offset}`) ?? 0) + 1);
  return counts;
}

/**
 * Scenario 2: the broker stops mid-stream and starts again on the same port with the same data, while
 * two workers run on it — one at-least-once, one exactly-once, each on its own topics. Both must ride
 * out the outage without exiting, resume, and finish the stream: at-least-once with nothing missing
 * (duplicates counted, as that guarantee allows them), exactly-once with nothing missing and nothing
 * twice for a read_committed reader, and balance counts matching the topics.
 *
 * It uses the suite's restartable broker (deploy/kafka), since stopping the shared one would disturb
 * others, and stops it for good at the end.
 */
import { setTimeout as delay } from 'node:timers/promises';

import { readTagged, writeEvents, type ScenarioTopics, type WrittenEvent } from '../support/run-worker-scenario.js';
import { waitFor } from '../support/wait-for.js';
import { CleanupStack } from './cleanup-stack.js';
import { patchRunConfig } from './config-patch.js';
import { cappedPlanEvents, plannedVariantKeys, tallyVariants, UNREACHABLE_TARGETS } from './planned-variants.js';
import { RowRecorder, type ScenarioRow, type ScenarioSize } from './scenario-row.js';
import { createScenarioTopics } from './scenario-topics.js';
import { compareStateWithTopics } from './state-ledger.js';
import { writeScenarioConfig, type SuiteContext } from './suite-context.js';
import { TopicProgress } from './topic-progress.js';
import { startWorkerProcess, type WorkerProcess } from './worker-process.js';

/** `downSeconds`: how long the broker stays down beyond its own stop and start times. */
const SIZES: Record<ScenarioSize, { readonly records: number; readonly downSeconds: number }> = {
  full: { records: 9_000, downSeconds: 30 },
  short: { records: 3_000, downSeconds: 0 },
};
const PARTITIONS = 3;
const GUARANTEES = ['at-least-once', 'exactly-once'] as const;
type Guarantee = (typeof GUARANTEES)[number];

interface Lane {
  readonly guarantee: Guarantee;
  readonly configPath: string;
  readonly topics: ScenarioTopics;
  readonly written: readonly WrittenEvent[];
  readonly worker: WorkerProcess;
}

export async function brokerStopStart(context: SuiteContext, size: ScenarioSize): Promise<ScenarioRow> {
  const { records, downSeconds } = SIZES[size];
  const row = new RowRecorder('2 broker stop/start', 'broker stopped and started mid-stream (same port, same data); workers stay up and resume; ALO none missing, EOS none missing and none twice');
  const cleanup = new CleanupStack();
  const lanes: Lane[] = [];
  try {
    const broker = await context.restartableBroker();
    cleanup.defer('the restartable broker', () => broker.stop());
    const { brokers } = broker;
    const progress = await TopicProgress.open(brokers, cleanup);
    for (const [index, guarantee] of GUARANTEES.entries()) {
      const topics = await createScenarioTopics(brokers, `rel-outage-${guarantee === 'exactly-once' ? 'eos' : 'alo'}`, PARTITIONS, cleanup);
      const written = await writeEvents(brokers, topics.source, cappedPlanEvents(records, context.seed + 10 + index), PARTITIONS);
      // A rate cap below what a batch wants keeps batches in flight, so the stop catches some half done.
      const config = await writeScenarioConfig(context, `outage-${guarantee}`, {
        brokers,
        topics,
        targets: UNREACHABLE_TARGETS,
        guarantee,
        batchSize: 100,
        rateCap: { perSecond: 100, burst: 10, whenExceeded: 'wait' },
        privacyGuardScope: 'off',
        seed: context.seed,
      });
      // Debug lines (each checkpoint) explain a failure in the logs kept with `--logs`.
      await patchRunConfig(config, { logLevel: 'debug' });
      lanes.push({ guarantee, configPath: config, topics, written, worker: startWorkerProcess({ configPath: config, instanceId: `outage-${index}`, logDir: context.logDir }, cleanup) });
    }
    row.count('source records per worker', records);

    const committedNow = (lane: Lane) => progress.committed(lane.topics.group, lane.topics.source, PARTITIONS);
    await waitFor(async () => (await Promise.all(lanes.map(committedNow))).every((committed) => committed !== undefined && committed > 0), {
      what: 'both workers to commit a first batch',
      timeoutMs: 90_000,
      intervalMs: 100,
    });
    const atStop = await Promise.all(lanes.map(committedNow));
    const stopping = Date.now();
    await broker.stopKeepingData();
    context.progress(`broker stopped after ${Date.now() - stopping} ms; committed then: ${atStop.join(', ')} of ${records} per worker`);
    // The outage itself: a fixed time the broker stays away, not a wait for an effect.
    if (downSeconds > 0) await delay(downSeconds * 1000);
    const startMs = await broker.startAgain();
    const back = Date.now();
    row.count('outage (s)', Math.round((back - stopping) / 100) / 10);
    context.progress(`broker back after ${startMs} ms of start-up`);
    row.check('both workers still running when the broker is back', lanes.every((lane) => lane.worker.running()), lanes.map((lane) => `${lane.guarantee}: ${lane.worker.running() ? 'running' : 'exited'}`).join(', '));

    const resumedAfter = new Map<Guarantee, number>();
    await waitFor(
      async () => {
        for (const lane of lanes) lane.worker.requireRunning();
        const committed = await Promise.all(lanes.map(committedNow));
        for (const [index, lane] of lanes.entries()) {
          const now = committed[index];
          if (now !== undefined && now > (atStop[index] ?? 0) && !resumedAfter.has(lane.guarantee)) resumedAfter.set(lane.guarantee, Date.now() - back);
        }
        return committed.every((now) => now === records);
      },
      { what: 'both workers to commit every source record after the outage', timeoutMs: 240_000, intervalMs: 250 },
    );
    for (const lane of lanes) {
      const short = lane.guarantee === 'exactly-once' ? 'EOS' : 'ALO';
      row.count(`${short} resumed after (s)`, Math.round((resumedAfter.get(lane.guarantee) ?? NaN) / 100) / 10);
      row.count(`${short} reconnects`, lane.worker.logLines().filter((line) => String(line.msg).includes('; reconnecting in ')).length);
      const exit = await lane.worker.stop('SIGTERM');
      row.check(`${short} worker exits 0 on SIGTERM`, exit.code === 0, JSON.stringify(exit));
    }

    for (const lane of lanes) {
      const short = lane.guarantee === 'exactly-once' ? 'EOS' : 'ALO';
      const expected = await plannedVariantKeys(lane.configPath, lane.topics.source, lane.written);
      const output = await readTagged(brokers, lane.topics.output, PARTITIONS, lane.guarantee === 'exactly-once' ? 'read_committed' : 'read_uncommitted');
      const tally = tallyVariants(expected, output);
      row.count(`${short} planned`, tally.expected);
      row.count(`${short} duplicates`, tally.duplicates);
      row.count(`${short} missing`, tally.missing);
      row.check(`${short}: none missing`, tally.missing === 0, `${tally.missing}, e.g. ${tally.missingExamples.join(', ')}`);
      row.check(`${short}: nothing unexpected`, tally.unexpected === 0, `${tally.unexpected}`);
      if (lane.guarantee === 'exactly-once') {
        row.check('EOS: no duplicates', tally.duplicates === 0, `${tally.duplicates}`);
        const ledger = await compareStateWithTopics({ brokers, group: lane.topics.group, sourceTopic: lane.topics.source, partitions: PARTITIONS, written: lane.written, synthetic: output });
        row.check('EOS: balance state = topics', ledger.mismatches.length === 0, ledger.mismatches.slice(0, 3).join('; '));
      }
    }
  } catch (error) {
    row.fail(error);
    for (const lane of lanes) row.fail(`${lane.guarantee} worker's last warnings: ${lastWarnings(lane.worker)}`);
  } finally {
    for (const problem of await cleanup.close()) row.fail(problem);
  }
  return row.finish();
}

/** The last few warn/error messages of a worker's log, for a failure line. */
function lastWarnings(worker: WorkerProcess): string {
  const lines = worker.logLines().filter((line) => line.level === 'warn' || line.level === 'error');
  return lines.length === 0 ? 'none' : lines.slice(-3).map((line) => String(line.msg).slice(0, 300)).join(' | ');
}

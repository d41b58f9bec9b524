/**
 * Scenario 1: the worker, exactly-once, killed with SIGKILL at seeded random points and started again
 * each time under the same instance id (its transactional id fences the dead one and aborts what it left
 * open). A read_committed reader must then see every planned synthetic record exactly once, and the
 * balance counts committed with them must match the topics.
 *
 * Kill points: each run of the worker is killed once the output has grown by a seeded number of records
 * (0 to `longestRun`, aborted ones and transaction markers included) since it started; 0 kills it as
 * soon as it has connected. A rate cap below what a batch wants keeps a transaction open most of the
 * time, so most kills land inside one.
 */
import { seededRandom } from '../support/seeded-random.js';
import { readTagged, writeEvents } from '../support/run-worker-scenario.js';
import { waitFor } from '../support/wait-for.js';
import { CleanupStack } from './cleanup-stack.js';
import { patchRunConfig } from './config-patch.js';
import { cappedPlanEvents, plannedVariantKeys, tallyVariants, UNREACHABLE_TARGETS } from './planned-variants.js';
import { RowRecorder, type ScenarioRow, type ScenarioSize } from './scenario-row.js';
import { createScenarioTopics } from './scenario-topics.js';
import { compareStateWithTopics } from './state-ledger.js';
import { writeScenarioConfig, type SuiteContext } from './suite-context.js';
import { TopicProgress } from './topic-progress.js';
import { startWorkerProcess } from './worker-process.js';

/**
 * `longestRun`: most output records a run of the worker may add before it is killed. Enough source
 * records that the runs before the last (at most kills × longestRun output records, aborted ones
 * included) never reach the end of the stream: 4 % rare records make 5 variants each.
 */
const SIZES: Record<ScenarioSize, { readonly kills: number; readonly records: number; readonly longestRun: number }> = {
  full: { kills: 20, records: 20_000, longestRun: 200 },
  short: { kills: 3, records: 2_400, longestRun: 120 },
};
const PARTITIONS = 3;

export async function killAndRestart(context: SuiteContext, size: ScenarioSize): Promise<ScenarioRow> {
  const { kills, records, longestRun } = SIZES[size];
  const row = new RowRecorder('1 kill -9 (EOS)', `${kills} SIGKILLs at seeded points, restarts; read_committed output = planned variants once each; state counts = topics`);
  const cleanup = new CleanupStack();
  try {
    const { brokers } = context;
    const topics = await createScenarioTopics(brokers, 'rel-kill', PARTITIONS, cleanup);
    const progress = await TopicProgress.open(brokers, cleanup);
    const written = await writeEvents(brokers, topics.source, cappedPlanEvents(records, context.seed + 1), PARTITIONS);
    const config = await writeScenarioConfig(context, 'kill-restart', {
      topics,
      targets: UNREACHABLE_TARGETS,
      guarantee: 'exactly-once',
      batchSize: 100,
      rateCap: { perSecond: 200, burst: 10, whenExceeded: 'wait' },
      privacyGuardScope: 'off',
      seed: context.seed,
    });
    // Debug lines (each checkpoint with its positions) explain a failure in the logs kept with `--logs`.
    await patchRunConfig(config, { logLevel: 'debug' });
    const expected = await plannedVariantKeys(config, topics.source, written);
    row.count('source records', written.length);
    row.count('planned variants', expected.size);

    const random = seededRandom(context.seed + 2);
    let killed = 0;
    for (let run = 0; run < kills; run++) {
      const growth = Math.floor(random() * (longestRun + 1));
      const before = await progress.written(topics.output, PARTITIONS);
      const worker = startWorkerProcess({ configPath: config, instanceId: 'eos-0', logDir: context.logDir }, cleanup);
      await waitFor(
        async () => {
          if (!worker.running()) throw new Error(`run ${run + 1} exited on its own`);
          if (growth === 0) return worker.logLines().some((line) => line.msg === 'connected');
          return (await progress.written(topics.output, PARTITIONS)) >= before + growth;
        },
        { what: `run ${run + 1} to write ${growth} output records`, timeoutMs: 90_000, intervalMs: 20 },
      ).catch((error: unknown) => {
        throw new Error(`${(error as Error).message}; its log ends:\n${worker.stderr().slice(-1_500)}`);
      });
      const exit = await worker.stop('SIGKILL');
      if (exit.signal === 'SIGKILL') killed += 1;
      context.progress(`kill ${run + 1}/${kills} after ${growth} output records (${await progress.written(topics.output, PARTITIONS)} in the output topic)`);
    }
    row.count('kills', killed);
    row.check(`all ${kills} runs killed by SIGKILL`, killed === kills, `${killed}`);

    const last = startWorkerProcess({ configPath: config, instanceId: 'eos-0', logDir: context.logDir }, cleanup);
    const resumed = Date.now();
    await waitFor(
      async () => {
        last.requireRunning();
        return (await progress.committed(topics.group, topics.source, PARTITIONS)) === written.length;
      },
      { what: 'the last run to commit every source record', timeoutMs: 180_000, intervalMs: 250 },
    );
    row.count('last run to the end (s)', Math.round((Date.now() - resumed) / 1000));
    const exit = await last.stop('SIGTERM');
    row.check('the last run exits 0 on SIGTERM', exit.code === 0, JSON.stringify(exit));

    const committed = await readTagged(brokers, topics.output, PARTITIONS, 'read_committed');
    const everything = await readTagged(brokers, topics.output, PARTITIONS, 'read_uncommitted');
    const tally = tallyVariants(expected, committed);
    row.count('committed outputs', tally.records);
    row.count('duplicates', tally.duplicates);
    row.count('missing', tally.missing);
    row.count('in aborted transactions', everything.length - committed.length);
    row.check('no duplicates', tally.duplicates === 0, `${tally.duplicates}`);
    row.check('none missing', tally.missing === 0, `${tally.missing}, e.g. ${tally.missingExamples.join(', ')}`);
    row.check('nothing unexpected', tally.unexpected === 0, `${tally.unexpected}`);
    row.check('every output from the suite model', committed.every(({ tag }) => tag.kind === 'synthetic' && tag.modelId === context.modelId));

    const ledger = await compareStateWithTopics({ brokers, group: topics.group, sourceTopic: topics.source, partitions: PARTITIONS, written, synthetic: committed });
    row.count('state mismatches', ledger.mismatches.length);
    row.check('balance state = topics', ledger.mismatches.length === 0, ledger.mismatches.slice(0, 3).join('; '));
  } catch (error) {
    row.fail(error);
  } finally {
    for (const problem of await cleanup.close()) row.fail(problem);
  }
  return row.finish();
}

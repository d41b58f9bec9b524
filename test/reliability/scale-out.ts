/**
 * Scenario 3: scale-out under exactly-once. Two workers share a 6-partition live stream; a third joins
 * after the first phase of the stream and one of the first two leaves (SIGTERM) after the second, so
 * partitions change owner twice while records keep coming. Read_committed output must hold each variant once; the balance counts the group
 * left in its state topic must equal the topics per partition and class (a handover that lost or
 * double-counted anything would show), and each rare class must reach its target share of the whole
 * output within ±1 percentage point, as one worker does (test/integration/run-worker.test.ts).
 */
import { readTagged, sorterEvents, sorterSchema, type SorterEvent } from '../support/run-worker-scenario.js';
import { waitFor } from '../support/wait-for.js';
import { CleanupStack } from './cleanup-stack.js';
import { producePaced } from './paced-producer.js';
import { duplicateCount, PER_RECORD_CAP } from './planned-variants.js';
import { RowRecorder, type ScenarioRow, type ScenarioSize } from './scenario-row.js';
import { createScenarioTopics } from './scenario-topics.js';
import { compareStateWithTopics } from './state-ledger.js';
import { writeScenarioConfig, type SuiteContext } from './suite-context.js';
import { TopicProgress } from './topic-progress.js';
import { startWorkerProcess, type WorkerProcess } from './worker-process.js';

/** `records`: the least the stream carries (a third per membership); more while members start. */
const SIZES: Record<ScenarioSize, { readonly records: number; readonly perSecond: number }> = {
  full: { records: 12_000, perSecond: 150 },
  short: { records: 2_400, perSecond: 200 },
};
const PARTITIONS = 6;
const TARGETS = { jam: 0.06, misroute: 0.06 } as const;
/** The ±1 percentage point of the single-worker end-to-end test. */
const SHARE_TOLERANCE = 0.01;

export async function scaleOut(context: SuiteContext, size: ScenarioSize): Promise<ScenarioRow> {
  const { records, perSecond } = SIZES[size];
  const row = new RowRecorder('3 scale-out (EOS)', '2 workers on 6 live partitions, a 3rd joins, then one leaves; each variant once; state counts = topics; shares on target ±1 pp');
  const cleanup = new CleanupStack();
  try {
    const { brokers } = context;
    const topics = await createScenarioTopics(brokers, 'rel-scale', PARTITIONS, cleanup);
    const progress = await TopicProgress.open(brokers, cleanup);
    const config = await writeScenarioConfig(context, 'scale-out', {
      topics,
      targets: TARGETS,
      guarantee: 'exactly-once',
      batchSize: 100,
      seed: context.seed,
    });
    const start = (index: number) => startWorkerProcess({ configPath: config, instanceId: `scale-${index}`, logDir: context.logDir }, cleanup);
    const assigned = (worker: WorkerProcess) => worker.logLines().some((line) => line.msg === 'partitions assigned' && (line.partitions as unknown[]).length > 0);

    const workers = [start(0), start(1)];
    await waitFor(() => workers.every(assigned), { what: 'the first two workers to share the partitions', timeoutMs: 90_000, intervalMs: 100 });
    // The stream runs on while members come and go: each phase gets `records / 3` records after the
    // membership change it starts with has taken effect, however long that took.
    const phase = Math.ceil(records / 3);
    const stream = producePaced(brokers, topics.source, sorterEvents(records * 10, { jam: 0.02, misroute: 0.02 }, context.seed + 20), PARTITIONS, perSecond);
    cleanup.defer('the paced producer', async () => {
      await stream.end().catch(() => undefined);
    });
    const reach = (count: number, what: string) => waitFor(() => stream.written() >= count, { what, timeoutMs: 120_000, intervalMs: 100 });

    await reach(phase, 'the first phase of the stream');
    const joiner = start(2);
    workers.push(joiner);
    await waitFor(() => assigned(joiner), { what: 'the third worker to get partitions', timeoutMs: 90_000, intervalMs: 100 });
    context.progress(`third worker has partitions at record ${stream.written()}`);

    await reach(stream.written() + phase, 'the second phase of the stream');
    const leaving = await workers[1]!.stop('SIGTERM');
    row.check('the leaving worker exits 0 on SIGTERM', leaving.code === 0, JSON.stringify(leaving));
    context.progress(`second worker left at record ${stream.written()}`);

    await reach(stream.written() + phase, 'the last phase of the stream');
    const written = await stream.end();
    await waitFor(
      async () => {
        workers[0]!.requireRunning();
        joiner.requireRunning();
        return (await progress.committed(topics.group, topics.source, PARTITIONS)) === written.length;
      },
      { what: 'the remaining workers to commit every source record', timeoutMs: 120_000, intervalMs: 250 },
    );
    for (const worker of [workers[0]!, workers[2]!]) {
      const exit = await worker.stop('SIGTERM');
      row.check('the remaining workers exit 0 on SIGTERM', exit.code === 0, JSON.stringify(exit));
    }
    const handovers = workers.flatMap((worker) => handedOverPartitions(worker)).length;
    row.count('source records', written.length);
    row.count('partitions handed over with counts', handovers);
    row.check('some partitions changed owner with their counts', handovers > 0, `${handovers}`);

    const output = await readTagged(brokers, topics.output, PARTITIONS, 'read_committed');
    const duplicates = duplicateCount(output);
    row.count('committed outputs', output.length);
    row.count('duplicates', duplicates);
    row.check('no duplicates', duplicates === 0, `${duplicates}`);
    const rareAt = new Set(written.filter((entry) => entry.event?.outcome === 'jam' || entry.event?.outcome === 'misroute').map((entry) => `${entry.partition}:${entry.offset}`));
    const strays = output.filter(({ tag }) => tag.kind !== 'synthetic' || tag.sampleIndex >= PER_RECORD_CAP || !rareAt.has(`${tag.source.partition}:${tag.source.offset}`));
    row.check('every output a variant of a rare record, within the per-record cap', strays.length === 0, `${strays.length}`);

    const ledger = await compareStateWithTopics({ brokers, group: topics.group, sourceTopic: topics.source, partitions: PARTITIONS, written, synthetic: output });
    row.count('state mismatches', ledger.mismatches.length);
    row.check('balance state = topics', ledger.mismatches.length === 0, ledger.mismatches.slice(0, 3).join('; '));

    const made = new Map<string, number>();
    for (const { message } of output) {
      const label = (sorterSchema.type.fromBuffer(message.value!) as SorterEvent).outcome ?? 'null';
      made.set(label, (made.get(label) ?? 0) + 1);
    }
    for (const [label, target] of Object.entries(TARGETS)) {
      const originals = written.filter((entry) => entry.event?.outcome === label).length;
      const share = (originals + (made.get(label) ?? 0)) / (written.length + output.length);
      row.count(`${label} share %`, Math.round(share * 1000) / 10);
      row.check(`${label} share within ±1 pp of ${target * 100} %`, Math.abs(share - target) <= SHARE_TOLERANCE, `${(share * 100).toFixed(2)} %`);
    }
  } catch (error) {
    row.fail(error);
  } finally {
    for (const problem of await cleanup.close()) row.fail(problem);
  }
  return row.finish();
}

/** Partitions a worker was given with counts already in them (restored from the state topic). */
function handedOverPartitions(worker: WorkerProcess): string[] {
  return worker
    .logLines()
    .filter((line) => line.msg === 'partitions assigned; balance counts restored from the state topic')
    .flatMap((line) => line.restored as { partition: string; originals: Record<string, number> }[])
    .filter((restored) => Object.values(restored.originals).some((count) => count > 0))
    .map((restored) => restored.partition);
}

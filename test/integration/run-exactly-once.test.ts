/**
 * `raretide run` as a real process under exactly-once: killed with SIGKILL mid-stream and started again
 * (same instance id, so its transactional id fences the dead one), a read_committed reader of the output
 * must see each synthetic record once — no more than the balance counts committed with them say were
 * made, and no fewer. Then SIGTERM must finish, checkpoint and exit 0 within the stop bound.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import { loadBalanceStates } from '../../connector/kafka/state-topic.js';
import type { SyntheticTag } from '../../connector/pipeline/provenance.js';
import { committedOffsets, endOffsets } from '../support/adapter-loop.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { fitSorterModel, makeWorkspace, readTagged, sorterEvents, startInProcess, sumOf, variantKey, writeEvents, writeRunConfig, writeSorterSchema } from '../support/run-worker-scenario.js';
import { killLeftovers, recordsWritten, spawnWorker } from '../support/spawned-worker.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';

const brokers = kafkaBrokers();
const createdTopics: string[] = [];
let workspace: Awaited<ReturnType<typeof makeWorkspace>>;

beforeAll(async () => {
  workspace = await makeWorkspace('run-eos');
});

afterAll(async () => {
  killLeftovers();
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
  await workspace?.remove();
});

describe('raretide run, exactly-once, a spawned worker killed and restarted', () => {
  it('shows each synthetic record once to read_committed readers; SIGTERM then exits 0', async () => {
    const source = await createUniqueTopic(brokers, { prefix: 'run-eos-src', partitions: 3 });
    const topics = { source, output: uniqueName('run-eos-out'), deadLetter: uniqueName('run-eos-dlq'), group: uniqueName('run-eos-group') };
    createdTopics.push(source, topics.output, topics.deadLetter, `raretide-state.${topics.group}`);
    const [schemaFile, modelId] = await Promise.all([writeSorterSchema(workspace.dir), fitSorterModel(`${workspace.dir}/model`)]);
    const written = await writeEvents(brokers, source, sorterEvents(6_000, { jam: 0.02, misroute: 0.02 }, 77), 3);
    // A rate cap well below what a batch wants keeps each batch's transaction open while it waits for
    // tokens (outputs sent chunk by chunk), so the kill most likely lands inside an open transaction.
    const config = await writeRunConfig(workspace.dir, 'eos', {
      brokers,
      topics,
      schemaFile,
      modelDir: `${workspace.dir}/model`,
      targets: { jam: 0.06, misroute: 0.06 },
      guarantee: 'exactly-once',
      batchSize: 500,
      rateCap: { perSecond: 60, burst: 10, whenExceeded: 'wait' },
    });

    const first = spawnWorker(config, 'eos-0');
    await waitFor(async () => (await recordsWritten(brokers, topics.output, 3)) >= 150, { what: 'the first worker to write some output', timeoutMs: 60_000, intervalMs: 50 });
    first.child.kill('SIGKILL');
    expect(await first.exited).toEqual({ code: null, signal: 'SIGKILL' });
    const endsAtKill = await endOffsets(brokers, source, 3);
    const committedAtKill = sumOf((await committedOffsets(brokers, topics.group, source, 3)).map((offset) => Math.max(0, offset)));
    expect(committedAtKill).toBeLessThan(sumOf(endsAtKill));

    const second = spawnWorker(config, 'eos-0');
    await waitFor(async () => sumOf(await committedOffsets(brokers, topics.group, source, 3)) === written.length, {
      what: 'the restarted worker to commit every source record',
      timeoutMs: 90_000,
      intervalMs: 250,
    });
    const signalled = Date.now();
    second.child.kill('SIGTERM');
    const exit = await second.exited;
    const stopMs = Date.now() - signalled;
    expect(exit, second.stderr()).toEqual({ code: 0, signal: null });
    expect(stopMs).toBeLessThan(28_000);
    expect(second.stderr()).toContain('"msg":"stopped cleanly"');

    const committed = await readTagged(brokers, topics.output, 3, 'read_committed');
    const everything = await readTagged(brokers, topics.output, 3, 'read_uncommitted');
    // The kill left an open transaction behind: its records are in the log, but only as aborted ones.
    expect(everything.length).toBeGreaterThan(committed.length);
    const keys = committed.map((entry) => variantKey(entry.tag));
    expect(new Set(keys).size).toBe(keys.length);
    expect(committed.every((entry) => entry.tag.kind === 'synthetic' && entry.tag.modelId === modelId)).toBe(true);
    // The counts committed with the outputs: per source partition, exactly as many synthetic records.
    const states = await loadBalanceStates({ kafka: { brokers, settings: {} }, stateTopic: `raretide-state.${topics.group}`, partitions: [0, 1, 2].map((partition) => ({ topic: source, partition })) });
    for (const [partition, state] of states.entries()) {
      const made = committed.filter((entry) => entry.tag.source.partition === partition);
      expect(made.length).toBe(Math.round(sumOf(Object.values(state!.synthetic))));
      expect(sumOf(Object.values(state!.originals))).toBe(written.filter((entry) => entry.partition === partition).length);
    }
    // Each variant of a record at most once (the key set above), and within the per-record cap k ≤ 5.
    expect(Math.max(...committed.map(({ tag }) => (tag as SyntheticTag).sampleIndex))).toBeLessThan(5);
    console.log(`[run-exactly-once] ${committed.length} synthetic records committed, ${everything.length - committed.length} more in aborted transactions; SIGTERM → exit in ${stopMs} ms`);
  }, 150_000);
});

describe('raretide run, exactly-once, two live replicas given one instance id', () => {
  it('stops the fenced one with a non-retriable error that names the fix; the other carries on', async () => {
    const source = await createUniqueTopic(brokers, { prefix: 'run-fence-src', partitions: 3 });
    const topics = { source, output: uniqueName('run-fence-out'), deadLetter: uniqueName('run-fence-dlq'), group: uniqueName('run-fence-group') };
    createdTopics.push(source, topics.output, topics.deadLetter, `raretide-state.${topics.group}`);
    const schemaFile = await writeSorterSchema(workspace.dir);
    const modelDir = `${workspace.dir}/fence-model`;
    await fitSorterModel(modelDir);
    const events = sorterEvents(1_200, { jam: 0.05, misroute: 0.05 }, 78);
    const config = await writeRunConfig(workspace.dir, 'fence', { brokers, topics, schemaFile, modelDir, targets: { jam: 0.1, misroute: 0.1 }, guarantee: 'exactly-once', batchSize: 100 });

    await writeEvents(brokers, source, events.slice(0, 600), 3);
    const first = await startInProcess(config, 'twin');
    await waitFor(() => first.worker.counters.records >= 600, { what: 'the first replica to process the first records', timeoutMs: 30_000 });
    // Same instance id, so the same transactional id: its initTransactions fences the first replica's producer.
    const second = await startInProcess(config, 'twin');
    await waitFor(() => second.logLines.some((line) => line.msg === 'connected'), { what: 'the second replica to connect', timeoutMs: 30_000 });
    await writeEvents(brokers, source, events.slice(600), 3, 600);

    await expect(first.worker.finished).rejects.toMatchObject({
      code: 'kafka.fenced',
      retriable: false,
      message: expect.stringContaining('give every worker replica its own stable instance id'),
    });
    await waitFor(async () => sumOf(await committedOffsets(brokers, topics.group, source, 3)) === events.length, { what: 'the second replica to commit every record', timeoutMs: 60_000, intervalMs: 250 });
    await second.stop();
    const committed = await readTagged(brokers, topics.output, 3, 'read_committed');
    const keys = committed.map((entry) => variantKey(entry.tag));
    expect(keys.length).toBeGreaterThan(0);
    expect(new Set(keys).size).toBe(keys.length);
  }, 120_000);
});

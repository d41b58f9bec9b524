/**
 * `raretide run` as a real process under at-least-once: killed with SIGKILL mid-stream and started again,
 * the output must hold every planned synthetic record at least once. Outputs written after the last
 * committed offsets are written again by the restarted worker: those duplicates are counted and printed,
 * not asserted away — at-least-once promises none missing, not none repeated.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import type { SyntheticTag } from '../../connector/pipeline/provenance.js';
import type { AvroRecord } from '../../model/features/avro-types.js';
import { synthesize } from '../../model/synthesize.js';
import { loadTrainedModel } from '../../model/trained-model.js';
import { committedOffsets, endOffsets } from '../support/adapter-loop.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { fitSorterModel, makeWorkspace, readTagged, sorterEvents, sumOf, variantKey, writeEvents, writeRunConfig, writeSorterSchema } from '../support/run-worker-scenario.js';
import { killLeftovers, recordsWritten, spawnWorker } from '../support/spawned-worker.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';

const brokers = kafkaBrokers();
const createdTopics: string[] = [];
let workspace: Awaited<ReturnType<typeof makeWorkspace>>;

/** `maxPerRecord` in the scenario's config: every rare record's k when the deficit never runs short. */
const PER_RECORD_CAP = 5;
/** Leading positions kept free of rare records, so each partition's balance has common counts first. */
const COMMON_LEAD = 300;

beforeAll(async () => {
  workspace = await makeWorkspace('run-alo');
});

afterAll(async () => {
  killLeftovers();
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
  await workspace?.remove();
});

describe('raretide run, at-least-once, a spawned worker killed and restarted', () => {
  it('leaves no planned synthetic record missing; counts the duplicates', async () => {
    const source = await createUniqueTopic(brokers, { prefix: 'run-alo-src', partitions: 3 });
    const topics = { source, output: uniqueName('run-alo-out'), deadLetter: uniqueName('run-alo-dlq'), group: uniqueName('run-alo-group') };
    createdTopics.push(source, topics.output, topics.deadLetter, `raretide-state.${topics.group}`);
    const [schemaFile, modelId] = await Promise.all([writeSorterSchema(workspace.dir), fitSorterModel(`${workspace.dir}/model`)]);
    // Targets far above what k ≤ 5 can reach keep every class's deficit above 5 all the way (after the
    // common lead, a partition's deficit is ≥ 0.2 of its common count), so the plan of every rare record
    // is the cap whatever counts a restart resumes from: the expected output is known without the planner.
    // The privacy guard is off so that none of those variants is dropped as too close to its source.
    const events = sorterEvents(3_000, { jam: 0.02, misroute: 0.02 }, 79).filter((event, position) => position >= COMMON_LEAD || event.outcome === 'ok');
    const written = await writeEvents(brokers, source, events, 3);
    const rare = written.filter((entry) => entry.event?.outcome === 'jam' || entry.event?.outcome === 'misroute');
    // A rate cap below what a batch wants keeps batches in flight (sent, not yet committed) most of the
    // time, so the kill lands between a batch's outputs and its commit and the restart repeats some.
    const config = await writeRunConfig(workspace.dir, 'alo', {
      brokers,
      topics,
      schemaFile,
      modelDir: `${workspace.dir}/model`,
      targets: { jam: 0.2, misroute: 0.2 },
      guarantee: 'at-least-once',
      batchSize: 1_000,
      rateCap: { perSecond: 100, burst: 10, whenExceeded: 'wait' },
      privacyGuardScope: 'off',
    });

    const first = spawnWorker(config, 'alo-0');
    // Mid-stream: after a first commit, partway through a later batch's outputs.
    await waitFor(async () => sumOf(await committedOffsets(brokers, topics.group, source, 3)) > 0, { what: 'the first worker to commit a batch', timeoutMs: 40_000, intervalMs: 50 });
    const outputAtFirstCommit = await recordsWritten(brokers, topics.output, 3);
    await waitFor(async () => (await recordsWritten(brokers, topics.output, 3)) >= outputAtFirstCommit + 50, { what: 'the first worker to write more output', timeoutMs: 20_000, intervalMs: 50 });
    first.child.kill('SIGKILL');
    expect(await first.exited).toEqual({ code: null, signal: 'SIGKILL' });
    const committedAtKill = sumOf((await committedOffsets(brokers, topics.group, source, 3)).map((offset) => Math.max(0, offset)));
    expect(committedAtKill).toBeGreaterThan(0);
    expect(committedAtKill).toBeLessThan(sumOf(await endOffsets(brokers, source, 3)));

    const second = spawnWorker(config, 'alo-0');
    await waitFor(async () => sumOf(await committedOffsets(brokers, topics.group, source, 3)) === written.length, {
      what: 'the restarted worker to commit every source record',
      timeoutMs: 60_000,
      intervalMs: 250,
    });
    second.child.kill('SIGTERM');
    expect(await second.exited, second.stderr()).toEqual({ code: 0, signal: null });

    const output = await readTagged(brokers, topics.output, 3, 'read_uncommitted');
    expect(output.every((entry) => entry.tag.kind === 'synthetic' && entry.tag.modelId === modelId)).toBe(true);
    const expected = new Set(rare.flatMap((entry) => Array.from({ length: PER_RECORD_CAP }, (_, sampleIndex) => `${source}:${entry.partition}:${entry.offset}:${sampleIndex}`)));
    const seen = new Map<string, number>();
    for (const { tag } of output) seen.set(variantKey(tag), (seen.get(variantKey(tag)) ?? 0) + 1);
    // The guard's exact-copy check holds whatever its scope, so a variant that decodes to a copy of its
    // source or a training row is dropped (counted as a guard skip), never written. Such a one is not
    // missing: remake it alone from its key (what `regenerate` does) and see the guard drop it.
    const model = await loadTrainedModel(`${workspace.dir}/model`);
    const { seed, temperature } = output[0]!.tag as SyntheticTag;
    const droppedAsCopy = (entry: (typeof rare)[number], sampleIndex: number): boolean => {
      const made = synthesize(
        model,
        [{ record: model.schemaType.fromBuffer(entry.value) as AvroRecord, className: String(entry.event!.outcome), key: { topic: source, partition: entry.partition, offset: entry.offset }, k: 1, firstSampleIndex: sampleIndex }],
        { temperature, seed, privacyGuard: { scope: 'off', minDistance: 0 } },
      );
      return made.records.length === 0 && made.counts.exactCopies === 1;
    };
    const copies = rare.flatMap((entry) =>
      Array.from({ length: PER_RECORD_CAP }, (_, sampleIndex) => sampleIndex)
        .filter((sampleIndex) => !seen.has(`${source}:${entry.partition}:${entry.offset}:${sampleIndex}`) && droppedAsCopy(entry, sampleIndex))
        .map((sampleIndex) => `${source}:${entry.partition}:${entry.offset}:${sampleIndex}`),
    );
    model.dispose();
    const missing = [...expected].filter((key) => !seen.has(key) && !copies.includes(key));
    const unexpected = [...seen.keys()].filter((key) => !expected.has(key));
    expect(missing, `missing variants (first 5): ${missing.slice(0, 5).join(', ')}`).toEqual([]);
    expect(unexpected).toEqual([]);
    expect(Math.max(...output.map(({ tag }) => (tag as SyntheticTag).sampleIndex))).toBe(PER_RECORD_CAP - 1);
    const duplicates = output.length - seen.size;
    console.log(
      `[run-at-least-once-kill] ${rare.length} rare of ${written.length} source records, ${expected.size} planned variants all present ` +
        `(${copies.length} of them dropped by the guard as exact copies); ` +
        `${output.length} output records, ${duplicates} duplicates (${committedAtKill} source records committed at the kill)`,
    );
  }, 120_000);
});

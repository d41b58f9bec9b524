/**
 * `raretide run` on the real broker, in-process: 20,000 sorter events with two rare classes at 1 % each
 * on 3 partitions, at-least-once, originals passed through. The output must hold exactly the synthetic
 * records the worker accounted for, each valid Avro with its provenance, reproducible from its tag; the
 * shares must meet the targets; bad records must land in the dead letters; metrics must agree with the
 * topics. A second scenario stops the worker halfway and checks the next one carries on with its counts.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import { RawFraming } from '../../connector/avro/raw-framing.js';
import type { WorkerOutcome } from '../../connector/cli/run/run-worker.js';
import { DEAD_LETTER_HEADERS } from '../../connector/pipeline/dead-letter.js';
import type { SyntheticTag } from '../../connector/pipeline/provenance.js';
import { synthesize } from '../../model/synthesize.js';
import { loadTrainedModel, type TrainedModel } from '../../model/trained-model.js';
import { headerText, readWholeTopic } from '../support/adapter-loop.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import {
  fitSorterModel,
  makeWorkspace,
  metricSamples,
  readTagged,
  sorterEvents,
  sorterSchema,
  startInProcess,
  sumOf,
  variantKey,
  writeEvents,
  writeRunConfig,
  writeSorterSchema,
  type ScenarioTopics,
  type SorterEvent,
  type TaggedMessage,
  type WrittenEvent,
} from '../support/run-worker-scenario.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';

const brokers = kafkaBrokers();
const TARGETS = { jam: 0.03, misroute: 0.03 };
const RARE_MIX = { jam: 0.01, misroute: 0.01 };
const createdTopics: string[] = [];
let workspace: Awaited<ReturnType<typeof makeWorkspace>>;
let schemaFile = '';
let modelDir = '';
let modelId = '';

beforeAll(async () => {
  workspace = await makeWorkspace('run-worker');
  schemaFile = await writeSorterSchema(workspace.dir);
  modelDir = `${workspace.dir}/model`;
  modelId = await fitSorterModel(modelDir);
});

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
  await workspace?.remove();
});

/** A fresh source topic; output, dead-letter (and state) topics are left for the worker to create. */
async function scenarioTopics(prefix: string): Promise<ScenarioTopics> {
  const source = await createUniqueTopic(brokers, { prefix: `${prefix}-src`, partitions: 3 });
  const topics = { source, output: uniqueName(`${prefix}-out`), deadLetter: uniqueName(`${prefix}-dlq`), group: uniqueName(`${prefix}-group`) };
  createdTopics.push(source, topics.output, topics.deadLetter, `raretide-state.${topics.group}`);
  return topics;
}

/** Output share per class, counted on the output topic itself. */
function outputShares(output: readonly TaggedMessage[]): Map<string, number> {
  const byClass = new Map<string, number>();
  for (const { message } of output) {
    const event = sorterSchema.type.fromBuffer(message.value!) as SorterEvent;
    byClass.set(event.outcome!, (byClass.get(event.outcome!) ?? 0) + 1);
  }
  return new Map([...byClass].map(([label, count]) => [label, count / output.length]));
}

describe('raretide run, at-least-once, 20,000 records on 3 partitions', () => {
  let topics: ScenarioTopics;
  let written: WrittenEvent[];
  let outcome: WorkerOutcome;
  let output: TaggedMessage[];
  let metricsText = '';
  let probes: { healthz: number; readyz: number };
  const badCodes = new Map<string, number>();

  beforeAll(async () => {
    topics = await scenarioTopics('run-e2e');
    const stream: (SorterEvent | undefined)[] = sorterEvents(20_000, RARE_MIX, 2024);
    // Undecodable payloads, missing labels and a class the model never learned, spread through the stream.
    for (let index = 500; index < stream.length; index += 1_000) {
      stream[index] = undefined;
      stream[index + 250]!.outcome = null;
      stream[index + 400]!.outcome = 'retired';
    }
    written = await writeEvents(brokers, topics.source, stream, 3);
    const config = await writeRunConfig(workspace.dir, 'e2e', { brokers, topics, schemaFile, modelDir, targets: TARGETS, includeOriginals: true });

    const run = await startInProcess(config, 'e2e-0');
    await waitFor(() => run.worker.counters.records >= written.length, { what: 'the worker to process every record', timeoutMs: 90_000 });
    const url = run.worker.opsUrl!;
    // The lag timer reads committed offsets: once it shows 0 on all 3 partitions, the last commit is in.
    await waitFor(
      async () => {
        const lag = metricSamples(await (await fetch(`${url}/metrics`)).text(), 'raretide_consumer_lag_records');
        return lag.size === 3 && sumOf(lag.values()) === 0;
      },
      { what: 'consumer lag 0 on 3 partitions', timeoutMs: 20_000 },
    );
    metricsText = await (await fetch(`${url}/metrics`)).text();
    probes = { healthz: (await fetch(`${url}/healthz`)).status, readyz: (await fetch(`${url}/readyz`)).status };
    outcome = await run.stop();
    output = await readTagged(brokers, topics.output, 3);
  }, 150_000);

  it('writes exactly the synthetic records it planned, once each, with complete provenance', () => {
    const { counters } = outcome;
    expect(counters.records).toBe(written.length);
    const synthetic = output.filter((entry) => entry.tag.kind === 'synthetic');
    const originals = output.filter((entry) => entry.tag.kind === 'original');
    expect(synthetic.length).toBeGreaterThan(600);
    expect(synthetic).toHaveLength(counters.total('synthetic'));
    expect(counters.total('planned')).toBe(counters.total('synthetic') + counters.total('guardDropped'));
    expect(new Set(synthetic.map((entry) => variantKey(entry.tag))).size).toBe(synthetic.length);
    expect(originals).toHaveLength(counters.total('consumed'));
    for (const { message, tag } of synthetic) {
      // Valid Avro of the reader schema, nothing left over (avsc's fromBuffer throws otherwise).
      const record = sorterSchema.type.fromBuffer(message.value!) as SorterEvent;
      const syntheticTag = tag as SyntheticTag;
      expect(syntheticTag).toMatchObject({ modelId, seed: 11n, temperature: 1, source: { topic: topics.source } });
      const source = written[Number(syntheticTag.source.offset) * 3 + syntheticTag.source.partition]!;
      expect([syntheticTag.source.partition, syntheticTag.source.offset]).toEqual([source.partition, source.offset]);
      expect(record.outcome).toBe(source.event!.outcome);
      expect(['jam', 'misroute']).toContain(record.outcome);
      // The key of the source record, so a variant lands in its original's partition.
      expect(message.key?.toString()).toBe(source.event!.parcelId);
    }
    for (const [label, tally] of counters.byClass) {
      expect(synthetic.filter((entry) => (sorterSchema.type.fromBuffer(entry.message.value!) as SorterEvent).outcome === label)).toHaveLength(tally.synthetic);
    }
  });

  it('meets each rare class target within ±1 percentage point on the output topic', () => {
    const shares = outputShares(output);
    for (const [label, target] of Object.entries(TARGETS)) {
      const before = written.filter((entry) => entry.event?.outcome === label).length / written.length;
      expect(before).toBeLessThan(target / 2);
      expect(Math.abs(shares.get(label)! - target)).toBeLessThan(0.01);
    }
    expect(outcome.shares.filter((share) => share.target !== undefined).map((share) => share.status)).toEqual(['met', 'met']);
  });

  it('regenerates synthetic records from their tags byte for byte through model/synthesize', async () => {
    const model: TrainedModel = await loadTrainedModel(modelDir);
    try {
      const framing = new RawFraming(sorterSchema);
      const synthetic = output.filter((entry) => entry.tag.kind === 'synthetic');
      const picks = [0, 1, Math.floor(synthetic.length / 2), synthetic.length - 1].map((index) => synthetic[index]!);
      for (const { message, tag } of picks) {
        const { source, sampleIndex, seed, temperature } = tag as SyntheticTag;
        const sourceRecord = written[Number(source.offset) * 3 + source.partition]!;
        const record = sorterSchema.type.fromBuffer(sourceRecord.value) as Record<string, unknown>;
        // The worker's privacy guard: the config's default (scope source, minimum distance 0.05).
        const privacyGuard = { scope: 'source', minDistance: 0.05 } as const;
        const result = synthesize(model, [{ record, className: sourceRecord.event!.outcome!, key: source, k: 1, firstSampleIndex: sampleIndex }], { temperature, seed, privacyGuard });
        expect(result.records).toHaveLength(1);
        expect(framing.frame(result.records[0]!.record).equals(message.value!)).toBe(true);
      }
    } finally {
      model.dispose();
    }
  });

  it('sends malformed payloads and missing or unknown labels to the dead-letter topic with a reason, and keeps going', async () => {
    const deadLetters = await readWholeTopic(brokers, topics.deadLetter, 3);
    const bad = written.filter((entry) => entry.event === undefined || entry.event.outcome === null || entry.event.outcome === 'retired');
    expect(bad).toHaveLength(60);
    expect(deadLetters).toHaveLength(bad.length);
    for (const message of deadLetters) {
      const code = headerText(message.headers, DEAD_LETTER_HEADERS.code)!;
      expect(headerText(message.headers, DEAD_LETTER_HEADERS.reason)?.length).toBeGreaterThan(10);
      badCodes.set(code, (badCodes.get(code) ?? 0) + 1);
      const source = written[Number(headerText(message.headers, 'raretide.source.offset')) * 3 + Number(headerText(message.headers, 'raretide.source.partition'))]!;
      expect(message.value!.equals(source.value)).toBe(true);
    }
    expect(badCodes.get('missing-label')).toBe(bad.filter((entry) => entry.event !== undefined).length);
    expect(sumOf(badCodes.values())).toBe(bad.length);
    expect(outcome.counters.deadLettered()).toBe(bad.length);
  });

  it('serves metrics that agree with the topics, and answers /healthz and /readyz with 200', () => {
    expect(probes).toEqual({ healthz: 200, readyz: 200 });
    const synthetic = output.filter((entry) => entry.tag.kind === 'synthetic').length;
    expect(sumOf(metricSamples(metricsText, 'raretide_synthetic_emitted_total').values())).toBe(synthetic);
    expect(sumOf(metricSamples(metricsText, 'raretide_originals_emitted_total').values())).toBe(output.length - synthetic);
    expect(sumOf(metricSamples(metricsText, 'raretide_records_consumed_total').values())).toBe(output.length - synthetic);
    expect(sumOf(metricSamples(metricsText, 'raretide_dead_letter_total').values())).toBe(outcome.counters.deadLettered());
    expect([...metricSamples(metricsText, 'raretide_model_info')].filter(([labels, value]) => labels.includes(`model_id="${modelId}"`) && value === 1)).toHaveLength(1);
    const shares = metricSamples(metricsText, 'raretide_class_share');
    for (const [label, target] of Object.entries(TARGETS)) {
      expect(metricSamples(metricsText, 'raretide_class_share_target').get(`{class="${label}"}`)).toBe(target);
      expect(Math.abs(shares.get(`{class="${label}"}`)! - target)).toBeLessThan(0.01);
    }
    expect(metricSamples(metricsText, 'raretide_model_latency_seconds_count').get('')).toBeGreaterThan(0);
    expect(metricSamples(metricsText, 'raretide_batch_records_sum').get('')).toBe(written.length);
  });
});

describe('raretide run, stopped halfway and started again', () => {
  it('restores the balance counts from the state topic, so the shares still meet the targets', async () => {
    const topics = await scenarioTopics('run-restart');
    const stream = sorterEvents(20_000, RARE_MIX, 2025);
    const config = await writeRunConfig(workspace.dir, 'restart', { brokers, topics, schemaFile, modelDir, targets: TARGETS, includeOriginals: true });

    const firstHalf = await writeEvents(brokers, topics.source, stream.slice(0, 10_000), 3);
    const first = await startInProcess(config, 'restart-0');
    await waitFor(() => first.worker.counters.records >= firstHalf.length, { what: 'the first worker to process the first half', timeoutMs: 60_000 });
    const firstOutcome = await first.stop();
    expect(firstOutcome.counters.records).toBe(10_000);

    await writeEvents(brokers, topics.source, stream.slice(10_000), 3, 10_000);
    const second = await startInProcess(config, 'restart-0');
    await waitFor(() => second.worker.counters.records >= 10_000, { what: 'the second worker to process the second half', timeoutMs: 60_000 });
    const secondOutcome = await second.stop();
    expect(secondOutcome.counters.records).toBe(10_000);

    // The second worker's counts, before its first plan, are the first worker's final counts.
    const restored = new Map<string, { originals: number; synthetic: number }>();
    for (const line of second.logLines.filter((entry) => entry.msg === 'partitions assigned; balance counts restored from the state topic')) {
      for (const partition of line.restored as { originals: Record<string, number>; synthetic: Record<string, number> }[]) {
        for (const [label, count] of Object.entries(partition.originals)) restored.set(label, { originals: (restored.get(label)?.originals ?? 0) + count, synthetic: restored.get(label)?.synthetic ?? 0 });
        for (const [label, count] of Object.entries(partition.synthetic)) restored.set(label, { originals: restored.get(label)?.originals ?? 0, synthetic: (restored.get(label)?.synthetic ?? 0) + count });
      }
    }
    for (const share of firstOutcome.shares) {
      expect(restored.get(share.label)).toEqual({ originals: share.originals, synthetic: share.synthetic });
    }
    // …and at the end they cover the whole stream, not only the second half.
    for (const share of secondOutcome.shares) {
      expect(share.originals).toBe(stream.filter((event) => event.outcome === share.label).length);
    }

    const output = await readTagged(brokers, topics.output, 3);
    const synthetic = output.filter((entry) => entry.tag.kind === 'synthetic');
    expect(synthetic).toHaveLength(firstOutcome.counters.total('synthetic') + secondOutcome.counters.total('synthetic'));
    expect(new Set(synthetic.map((entry) => variantKey(entry.tag))).size).toBe(synthetic.length);
    const shares = outputShares(output);
    for (const [label, target] of Object.entries(TARGETS)) expect(Math.abs(shares.get(label)! - target)).toBeLessThan(0.01);
  }, 150_000);
});

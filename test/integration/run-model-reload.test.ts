/**
 * Model hot reload in a running `raretide run` worker: a model refitted into `model.dir` takes over
 * between batches without a restart, and provenance names the model that made each record; a corrupt
 * model in its place is logged and ignored while the previous one keeps running.
 */
import { readFile, rename, writeFile } from 'node:fs/promises';
import { join } from 'node:path';

import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import type { SyntheticTag } from '../../connector/pipeline/provenance.js';
import { MANIFEST_FILE } from '../../model/vae/artifact.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { fitSorterModel, makeWorkspace, metricSamples, readTagged, sorterEvents, startInProcess, writeEvents, writeRunConfig, writeSorterSchema } from '../support/run-worker-scenario.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';

const brokers = kafkaBrokers();
const createdTopics: string[] = [];
let workspace: Awaited<ReturnType<typeof makeWorkspace>>;

beforeAll(async () => {
  workspace = await makeWorkspace('run-reload');
});

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
  await workspace?.remove();
});

describe('raretide run, model hot reload', () => {
  it('swaps in a new model between batches, names it in provenance, and ignores a corrupt one', async () => {
    const modelDir = join(workspace.dir, 'model');
    const [schemaFile, firstId] = await Promise.all([writeSorterSchema(workspace.dir), fitSorterModel(modelDir, 3)]);
    const source = await createUniqueTopic(brokers, { prefix: 'run-reload-src', partitions: 1 });
    const topics = { source, output: uniqueName('run-reload-out'), deadLetter: uniqueName('run-reload-dlq'), group: uniqueName('run-reload-group') };
    createdTopics.push(source, topics.output, topics.deadLetter, `raretide-state.${topics.group}`);
    const events = sorterEvents(900, { jam: 0.05, misroute: 0.05 }, 31);
    const config = await writeRunConfig(workspace.dir, 'reload', { brokers, topics, schemaFile, modelDir, targets: { jam: 0.1, misroute: 0.1 } });
    // Polled by hand below (`checkModel`); the timer is there but too slow to interfere.
    const run = await startInProcess(config, 'reload-0', { modelPollMs: 60_000 });
    const processed = (count: number) => waitFor(() => run.worker.counters.records >= count, { what: `${count} records processed`, timeoutMs: 30_000 });

    await writeEvents(brokers, source, events.slice(0, 300), 1);
    await processed(300);

    const secondId = await fitSorterModel(modelDir, 4);
    expect(secondId).not.toBe(firstId);
    expect(await run.worker.checkModel()).toBe('offered');
    await waitFor(() => run.worker.modelId() === secondId, { what: 'the new model to take over at the next turn of the loop' });
    await writeEvents(brokers, source, events.slice(300, 600), 1, 300);
    await processed(600);

    // A manifest claiming another id than its content hashes to: written whole (rename), read, refused.
    const manifestPath = join(modelDir, MANIFEST_FILE);
    const manifest = JSON.parse(await readFile(manifestPath, 'utf8')) as { id: string };
    await writeFile(`${manifestPath}.tmp`, JSON.stringify({ ...manifest, id: 'ffffffffffffffff' }));
    await rename(`${manifestPath}.tmp`, manifestPath);
    expect(await run.worker.checkModel()).toBe('rejected');
    expect(await run.worker.checkModel()).toBe('unchanged');
    await writeEvents(brokers, source, events.slice(600), 1, 600);
    await processed(900);
    const metrics = run.worker.metrics.registry.render();
    await run.stop();

    const refusal = run.logLines.find((line) => line.level === 'warn' && String(line.msg).includes('ffffffffffffffff'));
    expect(refusal?.msg).toContain(`cannot be loaded; keeping model ${secondId}`);
    expect(JSON.stringify(refusal?.error)).toContain('model.corrupt');
    expect([...metricSamples(metrics, 'raretide_model_info').keys()].map((labels) => labels.includes(`model_id="${secondId}"`))).toEqual([true]);

    const synthetic = (await readTagged(brokers, topics.output, 1)).map((entry) => entry.tag as SyntheticTag);
    const modelsBySegment = [0, 1, 2].map((segment) => new Set(synthetic.filter((tag) => Math.floor(Number(tag.source.offset) / 300) === segment).map((tag) => tag.modelId)));
    expect(modelsBySegment.map((models) => [...models])).toEqual([[firstId], [secondId], [secondId]]);
  }, 120_000);
});

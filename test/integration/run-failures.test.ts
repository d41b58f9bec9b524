/**
 * How `raretide run` meets failures on the real broker: one that may pass (the schema registry answering
 * 503) ends the session and the worker reconnects with a growing backoff, losing and repeating nothing;
 * one that will not pass (the source topic does not exist) exits 1 with a message naming the fix.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import { registerRun } from '../../connector/cli/commands/run.js';
import { EXIT_FAILURE, runCli } from '../../connector/cli/program.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import {
  fitSorterModel,
  makeWorkspace,
  readTagged,
  sorterEvents,
  sorterSchema,
  startInProcess,
  variantKey,
  writeEvents,
  writeRunConfig,
  writeSorterSchema,
} from '../support/run-worker-scenario.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';
import { startTestRegistry, type TestRegistry } from '../unit/avro/support/registry-server.js';
import { SORTER_EVENT_SCHEMA } from '../unit/pipeline/support/sorter-events.js';

const brokers = kafkaBrokers();
const TARGETS = { jam: 0.1, misroute: 0.1 };
const createdTopics: string[] = [];
let workspace: Awaited<ReturnType<typeof makeWorkspace>>;
let schemaFile = '';
let modelDir = '';
let registry: TestRegistry | undefined;

beforeAll(async () => {
  workspace = await makeWorkspace('run-failures');
  schemaFile = await writeSorterSchema(workspace.dir);
  modelDir = `${workspace.dir}/model`;
  await fitSorterModel(modelDir);
});

afterAll(async () => {
  await registry?.close();
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
  await workspace?.remove();
});

/** Schema registry wire format: byte 0, the schema id as a big-endian int32, the Avro body. */
function registryFramed(schemaId: number, body: Buffer): Buffer {
  const header = Buffer.alloc(5);
  header.writeInt32BE(schemaId, 1);
  return Buffer.concat([header, body]);
}

describe('raretide run, failures', () => {
  it('reconnects with backoff while the schema registry answers 503, then serves every record once', async () => {
    registry = await startTestRegistry({ 7: SORTER_EVENT_SCHEMA });
    registry.failWith = 503;
    const source = await createUniqueTopic(brokers, { prefix: 'run-retry-src', partitions: 1 });
    const topics = { source, output: uniqueName('run-retry-out'), deadLetter: uniqueName('run-retry-dlq'), group: uniqueName('run-retry-group') };
    createdTopics.push(source, topics.output, topics.deadLetter, `raretide-state.${topics.group}`);
    const events = sorterEvents(400, { jam: 0.05, misroute: 0.05 }, 41);
    await writeEvents(brokers, source, events, 1, 0, (event) => registryFramed(7, sorterSchema.type.toBuffer(event)));
    const config = await writeRunConfig(workspace.dir, 'retry', {
      brokers,
      topics,
      schemaFile,
      modelDir,
      targets: TARGETS,
      sourceFraming: { kind: 'registry', url: registry.url },
      sinkFraming: { kind: 'raw', schemaFile },
    });

    const run = await startInProcess(config, 'retry-0', { reconnect: { firstMs: 100, longestMs: 400 } });
    const reconnects = () => run.logLines.filter((line) => line.level === 'warn' && String(line.msg).includes('; reconnecting in '));
    await waitFor(() => reconnects().length >= 3, { what: 'three reconnects while the registry fails', timeoutMs: 60_000 });
    registry.failWith = undefined;
    await waitFor(() => run.worker.counters.records >= events.length, { what: 'every record served once the registry answers', timeoutMs: 60_000 });
    const outcome = await run.stop();

    expect(reconnects().slice(0, 3).map((line) => String(line.msg).replace(/^.*; reconnecting/, 'reconnecting'))).toEqual([
      'reconnecting in 100 ms (attempt 1)',
      'reconnecting in 200 ms (attempt 2)',
      'reconnecting in 400 ms (attempt 3)',
    ]);
    expect(String(reconnects()[0]!.msg)).toContain('answered HTTP 503');
    expect(outcome.sessions).toBeGreaterThanOrEqual(4);
    expect(outcome.counters.records).toBe(events.length);
    expect(outcome.counters.deadLettered()).toBe(0);
    const synthetic = await readTagged(brokers, topics.output, 1);
    expect(synthetic.length).toBeGreaterThan(0);
    expect(synthetic).toHaveLength(outcome.counters.total('synthetic'));
    expect(new Set(synthetic.map((entry) => variantKey(entry.tag))).size).toBe(synthetic.length);
  }, 120_000);

  it('exits 1 naming the missing source topic and the fix, instead of waiting on it', async () => {
    const missing = uniqueName('run-missing-src');
    const topics = { source: missing, output: uniqueName('run-missing-out'), deadLetter: uniqueName('run-missing-dlq'), group: uniqueName('run-missing-group') };
    const config = await writeRunConfig(workspace.dir, 'missing', { brokers, topics, schemaFile, modelDir, targets: TARGETS });
    let stderr = '';
    const code = await runCli(['node', 'raretide', 'run', '--config', config, '--instance-id', 'missing-0'], [registerRun], {
      env: {},
      stdout: () => undefined,
      stderr: (text) => (stderr += text),
    });
    expect(code).toBe(EXIT_FAILURE);
    expect(stderr).toContain(`error: source.topic ${missing} does not exist on ${brokers}: create it, or correct source.topic in the config`);
  }, 60_000);
});

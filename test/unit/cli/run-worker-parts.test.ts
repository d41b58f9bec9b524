/**
 * The parts of `raretide run` that need no broker: the model watcher and the swappable synthesizer
 * (hot reload), the lag poller, reconnect backoff and the topic framings.
 */
import { mkdtemp, rename, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import { ModelWatcher, type ModelWatchOptions } from '../../../connector/cli/run/model-watch.js';
import { LagPoller } from '../../../connector/cli/run/lag-poller.js';
import { backoffMs } from '../../../connector/cli/run/reconnect-backoff.js';
import { SwappableSynthesizer, type DisposableSynthesizer } from '../../../connector/cli/run/swappable-synthesizer.js';
import { topicFramings } from '../../../connector/avro/framings-from-config.js';
import { createLogger } from '../../../connector/ops/logger.js';
import { WorkerMetrics } from '../../../connector/ops/worker-metrics.js';
import type { SynthesisResult } from '../../../connector/pipeline/synthesizer.js';
import { waitFor } from '../../support/wait-for.js';
import { SORTER_EVENT_SCHEMA, sorterSchema } from '../pipeline/support/sorter-events.js';

let workspace = '';
beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-run-parts-'));
});
afterAll(async () => rm(workspace, { recursive: true, force: true }));

class FakeModel implements DisposableSynthesizer {
  readonly classes = ['ok', 'jam'];
  disposed = 0;
  constructor(readonly modelId: string) {}
  synthesize(): SynthesisResult {
    return { variants: [], dropped: { exactCopies: 0, nearSource: 0, nearClassRow: 0, invalid: 0 } };
  }
  dispose(): void {
    this.disposed += 1;
  }
}

function capturingLog(): { lines: Record<string, unknown>[]; log: ReturnType<typeof createLogger> } {
  const lines: Record<string, unknown>[] = [];
  return { lines, log: createLogger({ sink: (line) => lines.push(JSON.parse(line) as Record<string, unknown>) }) };
}

describe('SwappableSynthesizer', () => {
  it('delegates to the model in use and swaps only when asked, freeing what it replaces', () => {
    const first = new FakeModel('aaaa');
    const swappable = new SwappableSynthesizer(first);
    expect(swappable.swapIfOffered()).toBeUndefined();
    const dropped = new FakeModel('bbbb');
    const second = new FakeModel('cccc');
    swappable.offer(dropped);
    swappable.offer(second);
    // An offer superseded before any swap is freed at once; the model in use is untouched until the swap.
    expect([dropped.disposed, first.disposed, swappable.modelId]).toEqual([1, 0, 'aaaa']);
    expect(swappable.swapIfOffered()).toEqual({ from: 'aaaa', to: 'cccc' });
    expect([first.disposed, swappable.modelId, swappable.current]).toEqual([1, 'cccc', second]);
    expect(swappable.swapIfOffered()).toBeUndefined();
    swappable.dispose();
    expect(second.disposed).toBe(1);
  });
});

describe('ModelWatcher', () => {
  async function writeManifest(directory: string, id: string): Promise<void> {
    // As `saveModel` publishes a directory: the whole file appears at once.
    await writeFile(join(directory, 'manifest.json.tmp'), JSON.stringify({ id }));
    await rename(join(directory, 'manifest.json.tmp'), join(directory, 'manifest.json'));
  }

  async function watcherIn(name: string, overrides: Partial<ModelWatchOptions<FakeModel>> = {}) {
    const directory = await mkdtemp(join(workspace, `${name}-`));
    await writeManifest(directory, 'aaaa');
    const loads: string[] = [];
    const offered: FakeModel[] = [];
    const discarded: FakeModel[] = [];
    const { lines, log } = capturingLog();
    let nextId = 'aaaa';
    const watcher = new ModelWatcher<FakeModel>({
      directory,
      initialId: 'aaaa',
      load: async () => {
        loads.push(nextId);
        return new FakeModel(nextId);
      },
      accept: () => undefined,
      discard: (candidate) => discarded.push(candidate),
      offer: (candidate) => offered.push(candidate),
      log,
      ...overrides,
    });
    const publish = async (id: string) => {
      nextId = id;
      await writeManifest(directory, id);
    };
    return { directory, watcher, loads, offered, discarded, lines, publish };
  }

  it('offers a model once its id changes, and loads each manifest version at most once', async () => {
    const { watcher, loads, offered, publish } = await watcherIn('changes');
    expect(await watcher.check()).toBe('unchanged');
    await publish('bbbb');
    expect(await watcher.check()).toBe('offered');
    expect(await watcher.check()).toBe('unchanged');
    expect(loads).toEqual(['bbbb']);
    expect(offered.map((model) => model.modelId)).toEqual(['bbbb']);
    // Back to the first model: a new id again, so it is loaded and offered again.
    await publish('aaaa');
    expect(await watcher.check()).toBe('offered');
  });

  it('logs and ignores a model that does not load, until the directory changes again', async () => {
    let fail = true;
    const setup = await watcherIn('corrupt', {
      load: async () => {
        if (fail) throw new Error('weights.bin: checksum mismatch');
        return new FakeModel('cccc');
      },
    });
    await setup.publish('bbbb');
    expect(await setup.watcher.check()).toBe('rejected');
    expect(await setup.watcher.check()).toBe('unchanged');
    expect(setup.offered).toEqual([]);
    expect(setup.lines.at(-1)).toMatchObject({ level: 'warn', msg: expect.stringContaining('(id bbbb) but cannot be loaded; keeping model aaaa') });
    fail = false;
    await setup.publish('cccc');
    expect(await setup.watcher.check()).toBe('offered');
  });

  it('discards a verified model the worker cannot use (other classes or schema)', async () => {
    const setup = await watcherIn('refused', {
      accept: () => {
        throw new Error('it knows classes ok, retired');
      },
    });
    await setup.publish('bbbb');
    expect(await setup.watcher.check()).toBe('rejected');
    expect(setup.discarded.map((model) => model.modelId)).toEqual(['bbbb']);
    expect(setup.offered).toEqual([]);
    expect(setup.lines.at(-1)).toMatchObject({ level: 'warn', msg: expect.stringContaining('does not fit this worker') });
  });

  it('keeps trying while the manifest is unreadable, warning once per distinct reason', async () => {
    const setup = await watcherIn('unreadable');
    await writeFile(join(setup.directory, 'manifest.json'), '{"id": ');
    expect(await setup.watcher.check()).toBe('unreadable');
    expect(await setup.watcher.check()).toBe('unreadable');
    expect(setup.lines.filter((line) => line.level === 'warn')).toHaveLength(1);
    await setup.publish('bbbb');
    expect(await setup.watcher.check()).toBe('offered');
  });

  it('polls on its own timer once started, and stops', async () => {
    const setup = await watcherIn('timer', { intervalMs: 10 });
    setup.watcher.start();
    await setup.publish('bbbb');
    await waitFor(() => setup.offered.length === 1, { what: 'the timer to pick up the new model', timeoutMs: 5_000 });
    await setup.watcher.stop();
    await setup.publish('cccc');
    expect(setup.offered).toHaveLength(1);
  });
});

describe('LagPoller', () => {
  it('shows lag of the owned partitions only, dropping those that left', async () => {
    const metrics = new WorkerMetrics();
    let owned = [0, 1, 2].map((partition) => ({ topic: 'sorter.events', partition }));
    const poller = new LagPoller({
      owned: () => owned,
      measure: async (partitions) => partitions.map((partition) => ({ ...partition, committed: 10n, highWatermark: 15n + BigInt(partition.partition), lag: 5n + BigInt(partition.partition) })),
      metrics,
      log: capturingLog().log,
    });
    await poller.poll();
    expect([0, 1, 2].map((partition) => metrics.consumerLag.value({ topic: 'sorter.events', partition: String(partition) }))).toEqual([5, 6, 7]);
    owned = owned.slice(1);
    await poller.poll();
    expect(metrics.registry.render()).not.toContain('partition="0"');
    expect(metrics.consumerLag.value({ topic: 'sorter.events', partition: '2' })).toBe(7);
  });

  it('keeps the last values and warns once when the broker does not answer', async () => {
    const { lines, log } = capturingLog();
    const poller = new LagPoller({ owned: () => [{ topic: 't', partition: 0 }], measure: () => Promise.reject(new Error('timed out')), metrics: new WorkerMetrics(), log });
    await poller.poll();
    await poller.poll();
    expect(lines.filter((line) => line.level === 'warn')).toHaveLength(1);
  });
});

describe('reconnect backoff', () => {
  it('doubles from the first wait up to the longest', () => {
    const settings = { firstMs: 1_000, longestMs: 30_000 };
    expect([0, 1, 2, 3, 4, 5, 6, 100].map((attempt) => backoffMs(attempt, settings))).toEqual([1_000, 2_000, 4_000, 8_000, 16_000, 30_000, 30_000, 30_000]);
  });
});

describe('topicFramings', () => {
  it('writes raw outputs with the reader schema when the sink names no framing of its own', async () => {
    const schemaFile = join(workspace, 'sorter.avsc');
    await writeFile(schemaFile, JSON.stringify(SORTER_EVENT_SCHEMA));
    const { input, output } = await topicFramings({ kind: 'raw', schemaFile }, undefined, sorterSchema);
    const event = { parcelId: 'P1', lane: 2, weightKg: 3.5, beltSpeed: 1.7, outcome: 'jam' };
    expect(output.frame(event).equals(sorterSchema.type.toBuffer(event))).toBe(true);
    expect(input.kind).toBe('raw');
  });

  it('refuses a writer schema the reader cannot read, and registry framing for output', async () => {
    const otherFile = join(workspace, 'other.avsc');
    await writeFile(otherFile, JSON.stringify({ type: 'record', name: 'SorterEvent', namespace: 'dev.raretide.demo.sorter', fields: [{ name: 'lane', type: 'string' }] }));
    await expect(topicFramings({ kind: 'raw', schemaFile: otherFile }, undefined, sorterSchema)).rejects.toThrow(/source\.framing\.schemaFile: writer schema .* cannot be read as reader schema/);
    await expect(topicFramings({ kind: 'registry', url: 'http://127.0.0.1:1' }, undefined, sorterSchema)).rejects.toThrow(/set sink\.framing to raw or single-object/);
  });
});

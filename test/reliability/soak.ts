/**
 * Scenario 5: soak. One worker serves a stream written at a fixed rate for a fixed time while its
 * resident memory and event-loop lag (read from its own /metrics), tf.memory().numTensors and its live
 * heap (through the preloaded tensor probe) are sampled. After a warm-up, each series' least-squares
 * slope is judged:
 *
 * - numTensors: slope exactly 0 — every sample after warm-up the same count. tfjs counts tensors exactly,
 *   and between two turns of the worker's loop only the model's own tensors may exist; a leak of even
 *   one tensor per batch would climb by thousands over the full run.
 * - RSS less V8's young generation, and the live heap: the fitted line may rise by less than 5 % of the
 *   series' mean over the judged window. Every fifth sample the probe runs a full collection first (that
 *   sample's heap is the live heap), so garbage V8 has not yet collected does not pass for held memory.
 *   The young generation (`new_space`) is left out of RSS because V8 grows it in doublings, up to a fixed
 *   maximum, while the allocation rate stays high: measured here (full size, same seed), RSS rose
 *   25.6 and 27.6 MiB over the 8 judged minutes of two runs in two steps (+8, then +16 MiB) while the
 *   live heap moved 0.2–0.4 MiB and RSS outside V8's heap 0.9 MiB — the new space going from 4 to 8 to
 *   16 MiB semi-spaces, not a leak. The worker now runs with 64 MiB semi-spaces
 *   (connector/cli/run/node-options.ts), so the new space may grow to 128 MiB; at this rate it stayed at
 *   8–32 MiB (RSS +24.8 MiB, less the new space +0.3 MiB). Its size is reported beside the judged series. A leak grows without
 *   bound and passes 5 % over a long enough window (a rule of thumb of our own).
 * - Event-loop lag p99: the fitted line may rise by less than 10 ms over the window: well under what an
 *   operator would notice in batch latency, while a loop that slows down as it runs (growing queues,
 *   longer GC pauses) shows as a steady climb (also our own rule of thumb). Single samples swing by tens
 *   of milliseconds on a shared machine; the fitted line over the whole window averages that out.
 * Only rises fail: memory or lag that falls after warm-up is no leak.
 *
 * It also must keep up: every record written is committed within 60 s of the stream's end.
 */
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { setTimeout as delay } from 'node:timers/promises';

import { metricSamples, sorterEvents, sumOf } from '../support/run-worker-scenario.js';
import { waitFor } from '../support/wait-for.js';
import { CleanupStack } from './cleanup-stack.js';
import { producePaced } from './paced-producer.js';
import { RowRecorder, type ScenarioRow, type ScenarioSize } from './scenario-row.js';
import { createScenarioTopics } from './scenario-topics.js';
import { afterWarmUp, trendOf, type Sample } from './series-trend.js';
import { writeScenarioConfig, type SuiteContext } from './suite-context.js';
import { TopicProgress } from './topic-progress.js';
import { startWorkerProcess } from './worker-process.js';

const SIZES: Record<ScenarioSize, { readonly seconds: number; readonly warmUpSeconds: number; readonly sampleEverySeconds: number }> = {
  full: { seconds: 600, warmUpSeconds: 120, sampleEverySeconds: 5 },
  short: { seconds: 45, warmUpSeconds: 15, sampleEverySeconds: 1 },
};
/** Source records per second: a steady load well within what one worker serves on 2 shared cores. */
const RATE = 400;
const PARTITIONS = 3;
/** Most an RSS or live-heap line may rise over the judged window, as a share of its mean. */
const MEMORY_DRIFT_SHARE = 0.05;
/**
 * One sample in this many is taken after a full collection. Its pause (tens of ms) may show in the lag of
 * the next window; every fifth window alike, so it adds no trend.
 */
const LIVE_HEAP_EVERY = 5;
const LOOP_LAG_DRIFT_MS = 10;

export async function soak(context: SuiteContext, size: ScenarioSize): Promise<ScenarioRow> {
  const { seconds, warmUpSeconds, sampleEverySeconds } = SIZES[size];
  const row = new RowRecorder(
    '5 soak',
    `${seconds} s at ${RATE} records/s; after ${warmUpSeconds} s warm-up: numTensors slope exactly 0, RSS less V8's young generation and live heap rise < ${MEMORY_DRIFT_SHARE * 100} % of mean, loop-lag p99 rise < ${LOOP_LAG_DRIFT_MS} ms (least-squares line over the window); keeps up`,
  );
  const cleanup = new CleanupStack();
  try {
    const { brokers } = context;
    const topics = await createScenarioTopics(brokers, 'rel-soak', PARTITIONS, cleanup);
    const progress = await TopicProgress.open(brokers, cleanup);
    const config = await writeScenarioConfig(context, 'soak', {
      topics,
      targets: { jam: 0.06, misroute: 0.06 },
      seed: context.seed,
    });
    const worker = startWorkerProcess({ configPath: config, instanceId: 'soak-0', tensorProbe: true, logDir: context.logDir }, cleanup);
    const opsUrl = await worker.opsUrl();
    // Ready means the model is loaded (a backend chosen, so the probe may ask tf.memory()) and partitions assigned.
    await waitFor(async () => (await fetch(`${opsUrl}/readyz`)).status === 200, { what: 'the worker to be ready', timeoutMs: 90_000, intervalMs: 200 });

    const stream = producePaced(brokers, topics.source, sorterEvents(Math.ceil(RATE * seconds * 1.1), { jam: 0.02, misroute: 0.02 }, context.seed + 40), PARTITIONS, RATE);
    cleanup.defer('the paced producer', async () => {
      await stream.end().catch(() => undefined);
    });
    const started = Date.now();
    const series = { rssMiB: [] as Sample[], liveHeapMiB: [] as Sample[], externalMiB: [] as Sample[], loopLagP99Ms: [] as Sample[], tensors: [] as Sample[], tensorBytes: [] as Sample[], consumerLag: [] as Sample[], heapTotalMiB: [] as Sample[], outsideHeapMiB: [] as Sample[], rssLessNewSpaceMiB: [] as Sample[], newSpaceMiB: [] as Sample[] };
    for (let next = sampleEverySeconds, index = 0; next <= seconds; next += sampleEverySeconds, index++) {
      // The sampler's own schedule (not a wait for an effect).
      await delay(Math.max(0, started + next * 1000 - Date.now()));
      const t = (Date.now() - started) / 1000;
      // Every few samples the probe collects garbage first: the heap left is the live heap, the figure
      // that tells a leak of JavaScript objects from a heap that has not been collected yet.
      const collect = index % LIVE_HEAP_EVERY === 0;
      const [text, probe] = await Promise.all([fetch(`${opsUrl}/metrics`).then((response) => response.text()), worker.probe(collect ? 'sample-after-gc' : 'sample')]);
      series.rssMiB.push({ t, y: (metricSamples(text, 'raretide_process_resident_memory_bytes').get('') ?? NaN) / 2 ** 20 });
      series.loopLagP99Ms.push({ t, y: (metricSamples(text, 'raretide_event_loop_lag_p99_seconds').get('') ?? NaN) * 1000 });
      series.tensors.push({ t, y: probe.numTensors });
      series.tensorBytes.push({ t, y: probe.numBytes });
      if (collect) series.liveHeapMiB.push({ t, y: probe.heapUsedBytes / 2 ** 20 });
      series.externalMiB.push({ t, y: probe.externalBytes / 2 ** 20 });
      series.heapTotalMiB.push({ t, y: probe.heapTotalBytes / 2 ** 20 });
      series.outsideHeapMiB.push({ t, y: (probe.rssBytes - probe.heapTotalBytes) / 2 ** 20 });
      series.rssLessNewSpaceMiB.push({ t, y: (probe.rssBytes - probe.newSpaceBytes) / 2 ** 20 });
      series.newSpaceMiB.push({ t, y: probe.newSpaceBytes / 2 ** 20 });
      series.consumerLag.push({ t, y: sumOf(metricSamples(text, 'raretide_consumer_lag_records').values()) });
    }
    const written = (await stream.end()).length;
    const ended = Date.now();
    await waitFor(
      async () => {
        worker.requireRunning();
        return (await progress.committed(topics.group, topics.source, PARTITIONS)) === written;
      },
      { what: 'the worker to commit every record written', timeoutMs: 60_000, intervalMs: 250 },
    );
    row.count('records', written);
    row.count('drained after the end (s)', Math.round((Date.now() - ended) / 100) / 10);
    const exit = await worker.stop('SIGTERM');
    row.check('exits 0 on SIGTERM', exit.code === 0, JSON.stringify(exit));

    if (context.logDir !== undefined) await writeFile(join(context.logDir, 'soak-series.json'), JSON.stringify(series));
    const tensors = trendOf(afterWarmUp(series.tensors, warmUpSeconds));
    const rss = trendOf(afterWarmUp(series.rssMiB, warmUpSeconds));
    const loopLag = trendOf(afterWarmUp(series.loopLagP99Ms, warmUpSeconds));
    const consumerLag = trendOf(afterWarmUp(series.consumerLag, warmUpSeconds));
    row.count('samples judged', tensors.samples);
    row.count('numTensors', tensors.min === tensors.max ? `${tensors.min}` : `${tensors.min}–${tensors.max}`);
    row.count('numTensors slope /s', round(tensors.slope, 4));
    const tensorBytes = trendOf(afterWarmUp(series.tensorBytes, warmUpSeconds));
    row.count('tensor bytes', tensorBytes.min === tensorBytes.max ? `${tensorBytes.min}` : `${tensorBytes.min}–${tensorBytes.max}`);
    row.count('RSS mean MiB', round(rss.mean, 1));
    row.count('RSS slope MiB/s', round(rss.slope, 4));
    row.count('RSS drift MiB', round(rss.drift, 2));
    row.count('RSS less new space drift MiB', round(trendOf(afterWarmUp(series.rssLessNewSpaceMiB, warmUpSeconds)).drift, 2));
    const liveHeap = trendOf(afterWarmUp(series.liveHeapMiB, warmUpSeconds));
    row.count('live heap mean MiB', round(liveHeap.mean, 1));
    row.count('live heap drift MiB', round(liveHeap.drift, 2));
    // Not judged: memory outside V8's heap (Buffers, the WASM backend's memory), should RSS rise.
    row.count('external drift MiB', round(trendOf(afterWarmUp(series.externalMiB, warmUpSeconds)).drift, 2));
    row.count('V8 committed heap drift MiB', round(trendOf(afterWarmUp(series.heapTotalMiB, warmUpSeconds)).drift, 2));
    const newSpace = trendOf(afterWarmUp(series.newSpaceMiB, warmUpSeconds));
    row.count('V8 new space MiB', newSpace.min === newSpace.max ? `${round(newSpace.min, 1)}` : `${round(newSpace.min, 1)}–${round(newSpace.max, 1)}`);
    row.count('RSS outside V8 heap drift MiB', round(trendOf(afterWarmUp(series.outsideHeapMiB, warmUpSeconds)).drift, 2));
    row.count('loop lag p99 mean ms', round(loopLag.mean, 1));
    row.count('loop lag p99 slope ms/s', round(loopLag.slope, 4));
    row.count('consumer lag max', consumerLag.max);
    row.check('numTensors flat (slope exactly 0)', tensors.slope === 0 && tensors.min === tensors.max, `${tensors.min}–${tensors.max}, slope ${tensors.slope}`);
    const rssLessNewSpace = trendOf(afterWarmUp(series.rssLessNewSpaceMiB, warmUpSeconds));
    row.check(
      `RSS less V8's young generation flat (rise < ${MEMORY_DRIFT_SHARE * 100} % of mean)`,
      rssLessNewSpace.drift < MEMORY_DRIFT_SHARE * rssLessNewSpace.mean,
      `drift ${round(rssLessNewSpace.drift, 2)} MiB of ${round(rssLessNewSpace.mean, 1)} MiB`,
    );
    row.check(`live heap flat (rise < ${MEMORY_DRIFT_SHARE * 100} % of mean)`, liveHeap.drift < MEMORY_DRIFT_SHARE * liveHeap.mean, `drift ${round(liveHeap.drift, 2)} MiB of ${round(liveHeap.mean, 1)} MiB`);
    row.check(`loop lag p99 flat (rise < ${LOOP_LAG_DRIFT_MS} ms)`, loopLag.drift < LOOP_LAG_DRIFT_MS, `drift ${round(loopLag.drift, 2)} ms`);
  } catch (error) {
    row.fail(error);
  } finally {
    for (const problem of await cleanup.close()) row.fail(problem);
  }
  return row.finish();
}

function round(value: number, digits: number): number {
  const scale = 10 ** digits;
  return Math.round(value * scale) / scale;
}

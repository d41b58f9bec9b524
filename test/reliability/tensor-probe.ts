/**
 * Preloaded into a worker process by the soak scenario (`node --expose-gc --import tsx --import <this
 * file> …`): answers each "sample" message on the IPC channel with the worker's tf.memory() counts and
 * its heap; "sample-after-gc" runs a full garbage collection first, so the heap figure is the live heap.
 * The tfjs engine is one per process (kept on the global object), so this module sees the tensors the
 * worker's model allocates. Ask only after the model has loaded: before a backend is chosen, memory()
 * would choose one itself.
 */
import { getHeapSpaceStatistics } from 'node:v8';

import { memory } from '@tensorflow/tfjs-core';

export interface TensorProbeSample {
  readonly numTensors: number;
  readonly numBytes: number;
  /** V8's heap in use (live objects only after a collection) and memory outside it (Buffers, WASM), to tell where a growing RSS lives. */
  readonly heapUsedBytes: number;
  readonly externalBytes: number;
  /** V8's committed heap: pages it holds, used or not (new space grows in steps under a steady allocation rate). */
  readonly heapTotalBytes: number;
  /** The process's resident set at the same moment. */
  readonly rssBytes: number;
  /** The part of `heapTotalBytes` that is V8's young generation (`new_space`), however much of it is in use. */
  readonly newSpaceBytes: number;
}

export type TensorProbeRequest = 'sample' | 'sample-after-gc';

if (process.send !== undefined) {
  process.on('message', (message: TensorProbeRequest) => {
    if (message !== 'sample' && message !== 'sample-after-gc') return;
    if (message === 'sample-after-gc') globalThis.gc?.();
    const { numTensors, numBytes } = memory();
    const { heapUsed, external, heapTotal, rss } = process.memoryUsage();
    const sample: TensorProbeSample = { numTensors, numBytes, heapUsedBytes: heapUsed, externalBytes: external, heapTotalBytes: heapTotal, rssBytes: rss, newSpaceBytes: newSpaceSize() };
    process.send?.(sample);
  });
  // The channel must not keep the worker alive: it exits on SIGTERM when its own work is done.
  process.channel?.unref();
}

function newSpaceSize(): number {
  return getHeapSpaceStatistics().find((space) => space.space_name === 'new_space')?.space_size ?? 0;
}

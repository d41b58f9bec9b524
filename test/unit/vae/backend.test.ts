import * as tf from '@tensorflow/tfjs';
import { afterEach, describe, expect, it } from 'vitest';
import { activeBackendName, BACKEND_ENV_VARIABLE, inferenceChunkRows, initBackend } from '../../../model/vae/backend.js';

const saved = process.env[BACKEND_ENV_VARIABLE];
afterEach(() => {
  if (saved === undefined) delete process.env[BACKEND_ENV_VARIABLE];
  else process.env[BACKEND_ENV_VARIABLE] = saved;
});

describe('tensor backend', () => {
  it('starts tfjs-node when installed, else WASM (never falls to pure JS here), once per process', async () => {
    const messages: string[] = [];
    const name = await initBackend({ log: (message) => messages.push(message) });
    expect(['tensorflow', 'wasm']).toContain(name);
    expect(tf.getBackend()).toBe(name);
    expect(activeBackendName()).toBe(name);
    expect(messages.join('\n')).toContain(`tensor backend: ${name}`);
    expect(await initBackend()).toBe(name);
    expect(inferenceChunkRows()).toBeGreaterThan(0);
  });

  it('computes on WASM (the .wasm binaries load in Node)', async () => {
    const name = await initBackend();
    // 2×2 product checked by hand: [[1,2],[3,4]]·[[5,6],[7,8]] = [[19,22],[43,50]].
    const product = tf.tidy(() => Array.from(tf.matMul(tf.tensor2d([[1, 2], [3, 4]]), tf.tensor2d([[5, 6], [7, 8]])).dataSync()));
    expect(product).toEqual([19, 22, 43, 50]);
    expect(name === 'tensorflow' || tf.findBackend('wasm') !== null).toBe(true);
  });

  it('refuses to switch backends once one is active, naming the variable to unset', async () => {
    const name = await initBackend();
    const other = name === 'cpu' ? 'wasm' : 'cpu';
    await expect(initBackend({ force: other })).rejects.toMatchObject({ code: 'model.backend', message: expect.stringContaining(BACKEND_ENV_VARIABLE) });
  });

  it(`rejects an unknown ${BACKEND_ENV_VARIABLE}, listing the valid names`, async () => {
    process.env[BACKEND_ENV_VARIABLE] = 'gpu';
    await expect(initBackend()).rejects.toThrow(/RARETIDE_TF_BACKEND="gpu".*tensorflow, wasm, cpu/);
  });
});

/**
 * Picks the tensor backend: tfjs-node (native TensorFlow) when it is installed and loads, else
 * WASM, else the pure-JS 'cpu' backend. tfjs-node is an optional dependency that often fails to
 * build, so it is reached through a dynamic import that tolerates its absence.
 */
import { createRequire } from 'node:module';
import { dirname } from 'node:path';
import * as tf from '@tensorflow/tfjs';
import { setWasmPaths } from '@tensorflow/tfjs-backend-wasm';
import { RaretideError, UsageError } from '../../config/errors.js';

export type BackendName = 'tensorflow' | 'wasm' | 'cpu';

/** Environment variable that forces one backend, e.g. `RARETIDE_TF_BACKEND=cpu`. */
export const BACKEND_ENV_VARIABLE = 'RARETIDE_TF_BACKEND';

const BACKEND_NAMES: readonly BackendName[] = ['tensorflow', 'wasm', 'cpu'];

/**
 * Rows per forward pass at inference (`test/bench/vae.ts`, reference shape 30 features, 2×128
 * hidden, latent 8, 2 shared cores). WASM: encode/decode 5k/8k rows/s at 1 row per pass, 140k/195k
 * at 64, 250k/305k at 512 (the peak), 235k/270k at 1–8k, encode down to 205k at 65k rows; the
 * dramatic collapse reported elsewhere did not show here, but nothing beyond 512 pays. 'cpu' is
 * flat at 6–8k rows/s from 256 rows up. tfjs-node could not be installed here: its value is a guess.
 */
export const INFERENCE_CHUNK_ROWS: Readonly<Record<BackendName, number>> = {
  tensorflow: 4096,
  wasm: 512,
  cpu: 512,
};

export interface BackendOptions {
  /** Force a backend; defaults to the `RARETIDE_TF_BACKEND` environment variable, else automatic. */
  readonly force?: BackendName;
  /** Told which backend was chosen and why the better ones were not. */
  readonly log?: (message: string) => void;
}

let active: Promise<BackendName> | undefined;

/**
 * Initialises the best available backend once per process and returns its name. Later calls
 * return the same choice (a forced backend different from the active one is refused).
 */
export async function initBackend(options: BackendOptions = {}): Promise<BackendName> {
  const forced = options.force ?? parseBackendName(process.env[BACKEND_ENV_VARIABLE]);
  if (active === undefined) {
    const choosing = chooseBackend(forced, options.log ?? (() => {}));
    active = choosing;
    choosing.catch(() => {
      if (active === choosing) active = undefined;
    });
    return choosing;
  }
  const name = await active;
  if (forced !== undefined && forced !== name) {
    throw new RaretideError(
      'model.backend',
      `backend "${name}" is already active in this process; cannot switch to "${forced}" (unset ${BACKEND_ENV_VARIABLE} or restart)`,
    );
  }
  return name;
}

/** The name of the backend tfjs is running on now. */
export function activeBackendName(): BackendName {
  const name = tf.getBackend();
  if (!BACKEND_NAMES.includes(name as BackendName)) {
    throw new RaretideError('model.backend', `unexpected tfjs backend "${name}"; call initBackend() first`);
  }
  return name as BackendName;
}

/** Rows per inference pass on the active backend. */
export function inferenceChunkRows(): number {
  return INFERENCE_CHUNK_ROWS[activeBackendName()];
}

function parseBackendName(value: string | undefined): BackendName | undefined {
  if (value === undefined || value === '') return undefined;
  if (BACKEND_NAMES.includes(value as BackendName)) return value as BackendName;
  throw new UsageError(
    `${BACKEND_ENV_VARIABLE}="${value}" is not a backend: use one of ${BACKEND_NAMES.join(', ')} or leave it unset`,
  );
}

async function chooseBackend(forced: BackendName | undefined, log: (message: string) => void): Promise<BackendName> {
  const candidates = forced === undefined ? BACKEND_NAMES : [forced];
  const failures: string[] = [];
  for (const name of candidates) {
    const failure = await tryBackend(name);
    if (failure === undefined) {
      const why = forced !== undefined ? `forced by ${BACKEND_ENV_VARIABLE}` : failures.join('; ') || 'first choice';
      log(`tensor backend: ${name} (${why})`);
      return name;
    }
    failures.push(`${name} unavailable: ${failure}`);
  }
  throw new RaretideError(
    'model.backend',
    `no tensor backend could start (${failures.join('; ')}); unset ${BACKEND_ENV_VARIABLE} or reinstall dependencies with npm install`,
  );
}

/** Returns undefined when the backend is active, else a short reason. */
async function tryBackend(name: BackendName): Promise<string | undefined> {
  try {
    if (name === 'tensorflow') await loadTensorflowNode();
    if (name === 'wasm') pointWasmAtPackageFiles();
    const ok = await withoutNewProcessListeners(() => tf.setBackend(name));
    if (!ok) return 'tf.setBackend returned false';
    await tf.ready();
    return undefined;
  } catch (error) {
    return error instanceof Error ? error.message.split('\n')[0] : String(error);
  }
}

/**
 * The Emscripten loader of the WASM backend installs process-wide `uncaughtException` and
 * `unhandledRejection` handlers that rethrow (printing its whole minified source with any later
 * error). Node already fails on both; remove what the loader added.
 */
async function withoutNewProcessListeners<T>(action: () => Promise<T>): Promise<T> {
  const events = ['uncaughtException', 'unhandledRejection'];
  const before = events.map((event) => new Set(process.listeners(event as 'uncaughtException')));
  try {
    return await action();
  } finally {
    events.forEach((event, index) => {
      for (const listener of process.listeners(event as 'uncaughtException')) {
        if (!before[index]!.has(listener)) process.removeListener(event, listener);
      }
    });
  }
}

async function loadTensorflowNode(): Promise<void> {
  // A variable specifier keeps TypeScript from requiring the optional package's types.
  const specifier = '@tensorflow/tfjs-node';
  await import(specifier);
  if (tf.findBackend('tensorflow') === null) throw new Error('@tensorflow/tfjs-node loaded but registered no backend');
}

let wasmPathsSet = false;

/** The .wasm binaries sit beside the package's Node entry point; say so explicitly (bundlers, vitest). */
function pointWasmAtPackageFiles(): void {
  if (wasmPathsSet) return;
  const require = createRequire(import.meta.url);
  const entry = require.resolve('@tensorflow/tfjs-backend-wasm');
  setWasmPaths(`${dirname(entry)}/`);
  wasmPathsSet = true;
}

/**
 * The model directory: everything needed to sample again, with a content-hash id.
 *
 *   manifest.json  format, id, the hashed `model` section (topology, layout, hyper-parameters,
 *                  classes, weight and guard file index with sha256, caller attachments such as the
 *                  feature codec and the Avro schema), and unhashed `training` (curve) and
 *                  `environment` (library versions, backend) sections
 *   weights.bin    Float32 little-endian weights, in manifest order
 *   guard.bin      privacy-guard reference: feature scales, training rows per class, row hashes
 *
 * Model id = first 16 hex digits of sha256(canonical JSON of `model` ‖ weights.bin ‖ guard.bin).
 * The curve (wall-clock times) and versions stay out of the id, so the same data, seed and backend
 * give the same id. A directory is written under a temporary name and renamed into place, so a
 * crash never leaves a half-written model.
 */
import { createHash } from 'node:crypto';
import { mkdtemp, readFile, rename, rm, stat, writeFile } from 'node:fs/promises';
import { endianness } from 'node:os';
import { basename, dirname, join } from 'node:path';
import * as tf from '@tensorflow/tfjs';
import { RaretideError, UsageError } from '../../config/errors.js';
import type { FeatureLayout } from '../features/layout.js';
import { initBackend } from './backend.js';
import type { GuardReference } from './guard.js';
import type { VaeHyperParameters } from './hyperparameters.js';
import { ConditionalVae, type NamedWeight, type VaeTopology } from './network.js';
import type { SamplingModel } from './sampler.js';
import type { EpochReport, TrainedVae } from './train.js';

export const MANIFEST_FILE = 'manifest.json';
export const WEIGHTS_FILE = 'weights.bin';
export const GUARD_FILE = 'guard.bin';
const FORMAT = 'raretide.model';
const FORMAT_VERSION = 1;

/** Opaque JSON the caller stores with the model (feature codec, Avro schema text and fingerprint…). */
export type Attachments = Readonly<Record<string, unknown>>;

/** What `saveModel` writes. */
export interface ModelBundle {
  readonly trained: TrainedVae;
  readonly guard: GuardReference;
  readonly attachments: Attachments;
}

/** A model read back from its directory, ready to sample. */
export interface LoadedModel extends SamplingModel {
  readonly topology: VaeTopology;
  readonly hyperParameters: VaeHyperParameters;
  readonly classNames: readonly string[];
  readonly classCounts: readonly number[];
  readonly curve: readonly EpochReport[];
  readonly guard: GuardReference;
  readonly attachments: Attachments;
  readonly versions: Readonly<Record<string, string>>;
  readonly backend: string;
  dispose(): void;
}

interface ModelSection {
  readonly topology: VaeTopology;
  readonly layout: FeatureLayout;
  readonly hyperParameters: VaeHyperParameters;
  readonly classes: readonly { name: string; count: number }[];
  readonly weights: {
    readonly file: string;
    readonly bytes: number;
    readonly sha256: string;
    readonly tensors: readonly { name: string; shape: readonly number[]; offset: number }[];
  };
  readonly guard: {
    readonly file: string;
    readonly bytes: number;
    readonly sha256: string;
    readonly width: number;
    /** Byte offsets in the guard file. */
    readonly scaleOffset: number;
    readonly classRows: readonly { offset: number; rows: number }[];
    readonly rowHashesOffset: number;
    readonly rowHashCount: number;
  };
  readonly attachments: Attachments;
}

interface Manifest {
  readonly format: string;
  readonly formatVersion: number;
  readonly id: string;
  readonly model: ModelSection;
  readonly training: { curve: readonly EpochReport[]; bestEpoch: number; stoppedBy: string };
  readonly environment: { versions: Record<string, string>; backend: string };
}

/** The id `saveModel` would give this bundle (no files written). */
export function computeModelId(bundle: ModelBundle): string {
  return serialise(bundle).manifest.id;
}

/**
 * Writes the model directory at `directory` and returns the model id. An existing directory is
 * replaced only with `overwrite`.
 */
export async function saveModel(directory: string, bundle: ModelBundle, options: { overwrite?: boolean } = {}): Promise<string> {
  assertLittleEndian();
  const { manifest, weightsBytes, guardBytes } = serialise(bundle);
  const exists = await pathExists(directory);
  if (exists && !options.overwrite) {
    throw new UsageError(`model directory ${directory} already exists: choose another path or allow overwriting it`);
  }
  const staging = await mkdtemp(join(dirname(directory), `.${basename(directory)}.writing-`));
  try {
    await writeFile(join(staging, WEIGHTS_FILE), weightsBytes);
    await writeFile(join(staging, GUARD_FILE), guardBytes);
    await writeFile(join(staging, MANIFEST_FILE), `${JSON.stringify(manifest, null, 2)}\n`);
    if (exists) {
      const retired = `${staging}.old`;
      await rename(directory, retired);
      await rename(staging, directory);
      await rm(retired, { recursive: true, force: true });
    } else {
      await rename(staging, directory);
    }
  } catch (error) {
    await rm(staging, { recursive: true, force: true });
    throw error;
  }
  return manifest.id;
}

/**
 * Reads and verifies a model directory: every file against its checksum, then the id against the
 * content. Refuses a corrupt or edited model with `model.corrupt`, and a model other than
 * `expectedId` with `model.mismatch`.
 */
export async function loadModel(directory: string, options: { expectedId?: string } = {}): Promise<LoadedModel> {
  assertLittleEndian();
  const manifest = await readManifest(directory);
  const model = manifest.model;
  const weightsBytes = await readVerified(directory, model.weights.file, model.weights.bytes, model.weights.sha256);
  const guardBytes = await readVerified(directory, model.guard.file, model.guard.bytes, model.guard.sha256);
  const id = contentId(model, weightsBytes, guardBytes);
  if (id !== manifest.id) {
    throw corrupt(directory, MANIFEST_FILE, `its content hashes to ${id} but it claims id ${manifest.id} (edited by hand?)`);
  }
  if (options.expectedId !== undefined && options.expectedId !== id) {
    throw new RaretideError(
      'model.mismatch',
      `model directory ${directory} holds model ${id}, not the expected ${options.expectedId}: point to the right model directory or refit`,
    );
  }
  await initBackend();
  const network = new ConditionalVae(model.topology, 0);
  try {
    network.writeWeights(decodeWeights(model.weights.tensors, weightsBytes));
  } catch (error) {
    network.dispose();
    throw corrupt(directory, WEIGHTS_FILE, `its weights do not fit the topology (${(error as Error).message})`);
  }
  return {
    id,
    network,
    layout: model.layout,
    topology: model.topology,
    hyperParameters: model.hyperParameters,
    classNames: model.classes.map((entry) => entry.name),
    classCounts: model.classes.map((entry) => entry.count),
    curve: manifest.training.curve,
    guard: decodeGuard(model.guard, guardBytes),
    attachments: model.attachments,
    versions: manifest.environment.versions,
    backend: manifest.environment.backend,
    dispose: () => network.dispose(),
  };
}

function serialise(bundle: ModelBundle): { manifest: Manifest; weightsBytes: Uint8Array; guardBytes: Uint8Array } {
  const { trained, guard, attachments } = bundle;
  const weights = trained.network.readWeights();
  const weightsBytes = concatenate(weights.map((weight) => bytesOf(weight.values)));
  let offset = 0;
  const tensors = weights.map((weight) => {
    const entry = { name: weight.name, shape: [...weight.shape], offset };
    offset += weight.values.byteLength;
    return entry;
  });
  const guardParts: Uint8Array[] = [bytesOf(guard.scale)];
  let guardOffset = guard.scale.byteLength;
  const classRows = guard.classRows.map((rows) => {
    guardParts.push(bytesOf(rows));
    const entry = { offset: guardOffset, rows: rows.length / guard.width };
    guardOffset += rows.byteLength;
    return entry;
  });
  // BigUint64Array needs 8-byte alignment when read back: pad.
  const padding = (8 - (guardOffset % 8)) % 8;
  guardParts.push(new Uint8Array(padding));
  const rowHashesOffset = guardOffset + padding;
  guardParts.push(bytesOf(guard.rowHashes));
  const guardBytes = concatenate(guardParts);
  const model: ModelSection = {
    topology: trained.network.topology,
    layout: trained.layout,
    hyperParameters: trained.hyperParameters,
    classes: trained.classNames.map((name, index) => ({ name, count: trained.classCounts[index] ?? 0 })),
    weights: { file: WEIGHTS_FILE, bytes: weightsBytes.byteLength, sha256: sha256Hex(weightsBytes), tensors },
    guard: {
      file: GUARD_FILE,
      bytes: guardBytes.byteLength,
      sha256: sha256Hex(guardBytes),
      width: guard.width,
      scaleOffset: 0,
      classRows,
      rowHashesOffset,
      rowHashCount: guard.rowHashes.length,
    },
    attachments,
  };
  const manifest: Manifest = {
    format: FORMAT,
    formatVersion: FORMAT_VERSION,
    id: contentId(model, weightsBytes, guardBytes),
    model,
    training: { curve: trained.curve, bestEpoch: trained.bestEpoch, stoppedBy: trained.stoppedBy },
    environment: { versions: { tfjs: tf.version.tfjs, node: process.versions.node }, backend: tf.getBackend() },
  };
  return { manifest, weightsBytes, guardBytes };
}

function contentId(model: ModelSection, weightsBytes: Uint8Array, guardBytes: Uint8Array): string {
  const hash = createHash('sha256');
  hash.update(canonicalJson(model));
  hash.update(weightsBytes);
  hash.update(guardBytes);
  return hash.digest('hex').slice(0, 16);
}

/** JSON with object keys sorted at every level and no whitespace: the same value, the same text. */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(sortKeys(value));
}

function sortKeys(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(sortKeys);
  if (value !== null && typeof value === 'object') {
    return Object.fromEntries(
      Object.keys(value)
        .sort()
        .filter((key) => (value as Record<string, unknown>)[key] !== undefined)
        .map((key) => [key, sortKeys((value as Record<string, unknown>)[key])]),
    );
  }
  return value;
}

async function readManifest(directory: string): Promise<Manifest> {
  let text: string;
  try {
    text = await readFile(join(directory, MANIFEST_FILE), 'utf8');
  } catch (error) {
    throw new RaretideError(
      'model.missing',
      `no model at ${directory}: ${MANIFEST_FILE} cannot be read (${(error as NodeJS.ErrnoException).code ?? error}); run \`raretide fit\` to create one or fix the path`,
      { cause: error },
    );
  }
  let manifest: Manifest;
  try {
    manifest = JSON.parse(text) as Manifest;
  } catch (error) {
    throw corrupt(directory, MANIFEST_FILE, 'it is not valid JSON');
  }
  if (manifest.format !== FORMAT || manifest.formatVersion !== FORMAT_VERSION) {
    throw corrupt(directory, MANIFEST_FILE, `format ${manifest.format} v${manifest.formatVersion} is not ${FORMAT} v${FORMAT_VERSION}`);
  }
  if (typeof manifest.id !== 'string' || typeof manifest.model !== 'object' || manifest.model === null) {
    throw corrupt(directory, MANIFEST_FILE, 'it lacks an id or a model section');
  }
  return manifest;
}

async function readVerified(directory: string, file: string, bytes: number, sha256: string): Promise<Uint8Array> {
  let content: Buffer;
  try {
    content = await readFile(join(directory, file));
  } catch (error) {
    throw corrupt(directory, file, `it cannot be read (${(error as NodeJS.ErrnoException).code ?? error})`);
  }
  if (content.byteLength !== bytes) throw corrupt(directory, file, `it holds ${content.byteLength} bytes, the manifest says ${bytes}`);
  if (sha256Hex(content) !== sha256) throw corrupt(directory, file, 'its sha256 does not match the manifest');
  // A fresh, aligned copy: typed-array views below need offsets that are multiples of 4 or 8.
  return new Uint8Array(content);
}

function corrupt(directory: string, file: string, reason: string): RaretideError {
  return new RaretideError(
    'model.corrupt',
    `model directory ${directory} is corrupt: ${file} — ${reason}. Refit the model with \`raretide fit\` (or restore the directory from a copy).`,
  );
}

function decodeWeights(tensors: ModelSection['weights']['tensors'], bytes: Uint8Array): NamedWeight[] {
  return tensors.map((entry) => {
    const length = entry.shape.reduce((product, size) => product * size, 1);
    return { name: entry.name, shape: entry.shape, values: new Float32Array(bytes.buffer, bytes.byteOffset + entry.offset, length).slice() };
  });
}

function decodeGuard(index: ModelSection['guard'], bytes: Uint8Array): GuardReference {
  const width = index.width;
  return {
    width,
    scale: new Float32Array(bytes.buffer, bytes.byteOffset + index.scaleOffset, width).slice(),
    classRows: index.classRows.map((entry) => new Float32Array(bytes.buffer, bytes.byteOffset + entry.offset, entry.rows * width).slice()),
    rowHashes: new BigUint64Array(bytes.buffer, bytes.byteOffset + index.rowHashesOffset, index.rowHashCount).slice(),
  };
}

function bytesOf(view: ArrayBufferView): Uint8Array {
  return new Uint8Array(view.buffer, view.byteOffset, view.byteLength);
}

function concatenate(parts: readonly Uint8Array[]): Uint8Array {
  const total = parts.reduce((sum, part) => sum + part.byteLength, 0);
  const result = new Uint8Array(total);
  let offset = 0;
  for (const part of parts) {
    result.set(part, offset);
    offset += part.byteLength;
  }
  return result;
}

function sha256Hex(bytes: Uint8Array): string {
  return createHash('sha256').update(bytes).digest('hex');
}

async function pathExists(path: string): Promise<boolean> {
  try {
    await stat(path);
    return true;
  } catch {
    return false;
  }
}

/** The binary files are little-endian typed-array dumps; a big-endian host would misread them. */
function assertLittleEndian(): void {
  if (endianness() !== 'LE') {
    throw new RaretideError('model.platform', 'model files are little-endian; this host is big-endian and cannot read or write them');
  }
}

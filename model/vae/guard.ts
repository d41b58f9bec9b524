/**
 * Privacy guard over decoded feature vectors. A decode is dropped (and counted, never silently) when
 * - it is an exact copy of any training row or of its source record (always, whatever the scope), or
 * - its scaled distance to its source record (scope 'source') or to any kept training row of its
 *   class (scope 'class') is under `minDistance`.
 *
 * Scaled distance: root-mean-square over features of (a_j − b_j) / scale_j, with scale_j the
 * training standard deviation of feature j, so it reads in standard deviations whatever the width.
 * Callers that round decodes (integers, categories) should pass the re-encoded vector, so that a
 * copy produced by rounding is still caught.
 */
import { UsageError } from '../../config/errors.js';
import { createPrng, type Seed } from '../random.js';
import { rowsByClass, shuffle, type TrainingData } from './dataset.js';

/** What the guard keeps of the training data (stored in the model directory). */
export interface GuardReference {
  readonly width: number;
  /** Per-feature training standard deviation, floored at MIN_SCALE. */
  readonly scale: Float32Array;
  /** 64-bit hashes of every training row, sorted ascending. */
  readonly rowHashes: BigUint64Array;
  /** Training rows per class (row-major), at most `maxRowsPerClass` of each, drawn at random. */
  readonly classRows: readonly Float32Array[];
}

export type GuardScope = 'off' | 'source' | 'class';

export interface PrivacyGuardOptions {
  /** Which real rows a decode must keep its distance from. @default 'source' */
  readonly scope: GuardScope;
  /** Smallest allowed scaled distance (in training standard deviations). @default 0.05 */
  readonly minDistance: number;
}

export const DEFAULT_PRIVACY_GUARD: PrivacyGuardOptions = { scope: 'source', minDistance: 0.05 };

/** A decoded vector, the class it was drawn for, and the features of the record it came from. */
export interface GuardCandidate {
  readonly features: Float32Array;
  readonly classIndex: number;
  readonly source: Float32Array;
}

export interface GuardCounts {
  readonly checked: number;
  readonly kept: number;
  /** Identical to a training row or to the source record. */
  readonly exactCopies: number;
  /** Within `minDistance` of the source record. */
  readonly nearSource: number;
  /** Within `minDistance` of a training row of the class. */
  readonly nearClassRow: number;
}

export interface GuardResult {
  /** keep[i] is false when candidate i was dropped. */
  readonly keep: boolean[];
  readonly counts: GuardCounts;
}

/** Floor of the per-feature scale, so a feature constant in training cannot divide by zero. */
export const MIN_SCALE = 1e-3;

/** Rows kept per class for the 'class' scope. @default 20000 */
export const DEFAULT_MAX_ROWS_PER_CLASS = 20_000;

export function buildGuardReference(
  data: TrainingData,
  options: { maxRowsPerClass?: number; seed?: Seed } = {},
): GuardReference {
  const { width, features } = data;
  const rows = data.classes.length;
  const mean = new Float64Array(width);
  const meanSquare = new Float64Array(width);
  for (let r = 0; r < rows; r++) {
    for (let j = 0; j < width; j++) {
      const value = features[r * width + j]!;
      mean[j]! += value / rows;
      meanSquare[j]! += (value * value) / rows;
    }
  }
  const scale = Float32Array.from(mean, (m, j) => Math.max(MIN_SCALE, Math.sqrt(Math.max(0, meanSquare[j]! - m * m))));
  const rowHashes = new BigUint64Array(rows);
  for (let r = 0; r < rows; r++) rowHashes[r] = hashRow(features.subarray(r * width, (r + 1) * width));
  rowHashes.sort();
  const limit = options.maxRowsPerClass ?? DEFAULT_MAX_ROWS_PER_CLASS;
  const prng = createPrng(options.seed ?? 0);
  const classRows = rowsByClass(data.classes, data.classNames.length).map((indices) => {
    const chosen = indices.length > limit ? shuffle(indices, prng).slice(0, limit) : indices;
    const block = new Float32Array(chosen.length * width);
    chosen.forEach((row, i) => block.set(features.subarray(row * width, (row + 1) * width), i * width));
    return block;
  });
  return { width, scale, rowHashes, classRows };
}

export function applyPrivacyGuard(
  reference: GuardReference,
  candidates: readonly GuardCandidate[],
  options: PrivacyGuardOptions = DEFAULT_PRIVACY_GUARD,
): GuardResult {
  if (!(options.minDistance >= 0)) {
    throw new UsageError(`privacy guard minDistance must be ≥ 0, got ${options.minDistance}`);
  }
  let exactCopies = 0;
  let nearSource = 0;
  let nearClassRow = 0;
  const keep = candidates.map((candidate) => {
    if (candidate.features.length !== reference.width) {
      throw new UsageError(`guard candidate has ${candidate.features.length} features; the model has ${reference.width}`);
    }
    if (isTrainingRow(reference, candidate.features) || identical(candidate.features, candidate.source)) {
      exactCopies++;
      return false;
    }
    if (options.scope === 'source' && scaledDistance(candidate.features, candidate.source, reference.scale) < options.minDistance) {
      nearSource++;
      return false;
    }
    if (options.scope === 'class' && nearestInClass(reference, candidate) < options.minDistance) {
      nearClassRow++;
      return false;
    }
    return true;
  });
  const kept = keep.filter(Boolean).length;
  return { keep, counts: { checked: candidates.length, kept, exactCopies, nearSource, nearClassRow } };
}

/** RMS over features of (a − b)/scale. */
export function scaledDistance(a: ArrayLike<number>, b: ArrayLike<number>, scale: ArrayLike<number>): number {
  let sum = 0;
  for (let j = 0; j < a.length; j++) {
    const difference = (a[j]! - b[j]!) / scale[j]!;
    sum += difference * difference;
  }
  return Math.sqrt(sum / a.length);
}

/** True when a row with exactly these features was in the training data. */
export function isTrainingRow(reference: GuardReference, features: Float32Array): boolean {
  const target = hashRow(features);
  const hashes = reference.rowHashes;
  let low = 0;
  let high = hashes.length;
  while (low < high) {
    const middle = (low + high) >> 1;
    if (hashes[middle]! < target) low = middle + 1;
    else high = middle;
  }
  return low < hashes.length && hashes[low] === target;
}

/**
 * 64-bit hash of a row's float32 bit patterns (−0 counted as +0): an FNV-1a lane and a
 * MurmurHash3-style lane over 32-bit words, each finished with the MurmurHash3 fmix32 mixer.
 * 32-bit operations only, so hashing a million rows takes well under a second.
 */
export function hashRow(features: Float32Array): bigint {
  const normalised = Float32Array.from(features, (value) => value + 0);
  const words = new Uint32Array(normalised.buffer);
  let fnv = 0x811c9dc5;
  let murmur = 0x9747b28c ^ words.length;
  for (const word of words) {
    fnv = Math.imul(fnv ^ word, 0x01000193);
    let k = Math.imul(word, 0xcc9e2d51);
    k = (k << 15) | (k >>> 17);
    murmur ^= Math.imul(k, 0x1b873593);
    murmur = (murmur << 13) | (murmur >>> 19);
    murmur = (Math.imul(murmur, 5) + 0xe6546b64) | 0;
  }
  return (BigInt(fmix32(fnv)) << 32n) | BigInt(fmix32(murmur));
}

function fmix32(value: number): number {
  let h = value ^ (value >>> 16);
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

function identical(a: Float32Array, b: Float32Array): boolean {
  if (a.length !== b.length) return false;
  for (let j = 0; j < a.length; j++) if (a[j] !== b[j]) return false;
  return true;
}

function nearestInClass(reference: GuardReference, candidate: GuardCandidate): number {
  const rows = reference.classRows[candidate.classIndex];
  if (rows === undefined) return Number.POSITIVE_INFINITY;
  const width = reference.width;
  let nearest = Number.POSITIVE_INFINITY;
  for (let start = 0; start < rows.length; start += width) {
    nearest = Math.min(nearest, scaledDistance(candidate.features, rows.subarray(start, start + width), reference.scale));
  }
  return nearest;
}

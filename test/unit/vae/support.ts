/** Layouts, data and small linear algebra shared by the VAE tests. */
import type { FeatureBlock, FeatureLayout } from '../../../model/features/layout.js';
import type { Prng } from '../../../model/random.js';
import type { TrainingData } from '../../../model/vae/dataset.js';

/** `width` continuous features, no gates. */
export function continuousLayout(width: number): FeatureLayout {
  const blocks: FeatureBlock[] = Array.from({ length: width }, (_, i) => ({
    kind: 'continuous',
    path: `reading${i}`,
    offset: i,
    width: 1,
  }));
  return { width, blocks };
}

/**
 * A little of everything: 3 continuous readings, a 3-way categorical `sea_state`, and a nullable
 * `gust` (presence at 6, its value at 7, gated).
 */
export const MIXED_LAYOUT: FeatureLayout = {
  width: 8,
  blocks: [
    { kind: 'continuous', path: 'wave_height', offset: 0, width: 1 },
    { kind: 'continuous', path: 'wind_speed', offset: 1, width: 1 },
    { kind: 'continuous', path: 'water_temp', offset: 2, width: 1 },
    { kind: 'categorical', path: 'sea_state', offset: 3, width: 3, categories: ['calm', 'moderate', 'rough'] },
    { kind: 'presence', path: 'gust', offset: 6, width: 1 },
    { kind: 'continuous', path: 'gust', offset: 7, width: 1, gatedBy: 6 },
  ],
};

/**
 * Invented harbour-sensor rows for MIXED_LAYOUT: class 1 ("storm", rare) has high waves and wind,
 * mostly rough seas and usually a gust reading.
 */
export function mixedData(rows: number, rareShare: number, prng: Prng): TrainingData {
  const width = MIXED_LAYOUT.width;
  const features = new Float32Array(rows * width);
  const classes = new Int32Array(rows);
  for (let r = 0; r < rows; r++) {
    const storm = prng.uniform() < rareShare ? 1 : 0;
    classes[r] = storm;
    const energy = prng.normal() + 2 * storm;
    const at = r * width;
    features[at] = 0.8 * energy + 0.4 * prng.normal();
    features[at + 1] = 0.7 * energy + 0.5 * prng.normal();
    features[at + 2] = 0.3 * prng.normal() - 0.5 * storm;
    const sea = energy < 0 ? 0 : energy < 1.5 ? 1 : 2;
    features[at + 3 + sea] = 1;
    const hasGust = prng.uniform() < (storm ? 0.9 : 0.3);
    features[at + 6] = hasGust ? 1 : 0;
    features[at + 7] = hasGust ? 0.9 * energy + 0.3 * prng.normal() : 0;
  }
  return { width, features, classes, classNames: ['calm_day', 'storm'] };
}

/** Eigen-decomposition of a symmetric matrix (cyclic Jacobi); eigenvalues descending, vectors as columns. */
export function symmetricEigen(matrix: number[][]): { values: number[]; vectors: number[][] } {
  const n = matrix.length;
  const a = matrix.map((row) => [...row]);
  const v: number[][] = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 1 : 0)));
  for (let sweep = 0; sweep < 100; sweep++) {
    let off = 0;
    for (let p = 0; p < n; p++) for (let q = p + 1; q < n; q++) off += a[p]![q]! ** 2;
    if (off < 1e-22) break;
    for (let p = 0; p < n; p++) {
      for (let q = p + 1; q < n; q++) {
        if (Math.abs(a[p]![q]!) < 1e-300) continue;
        const theta = (a[q]![q]! - a[p]![p]!) / (2 * a[p]![q]!);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1);
        const s = t * c;
        for (let k = 0; k < n; k++) {
          const akp = a[k]![p]!;
          const akq = a[k]![q]!;
          a[k]![p] = c * akp - s * akq;
          a[k]![q] = s * akp + c * akq;
        }
        for (let k = 0; k < n; k++) {
          const apk = a[p]![k]!;
          const aqk = a[q]![k]!;
          a[p]![k] = c * apk - s * aqk;
          a[q]![k] = s * apk + c * aqk;
        }
        for (let k = 0; k < n; k++) {
          const vkp = v[k]![p]!;
          const vkq = v[k]![q]!;
          v[k]![p] = c * vkp - s * vkq;
          v[k]![q] = s * vkp + c * vkq;
        }
      }
    }
  }
  const order = Array.from({ length: n }, (_, i) => i).sort((i, j) => a[j]![j]! - a[i]![i]!);
  return {
    values: order.map((i) => a[i]![i]!),
    vectors: v.map((row) => order.map((i) => row[i]!)),
  };
}

/** Orthonormal basis (columns) of the span of the columns of `matrix` (d × q), by Gram–Schmidt. */
export function orthonormalColumns(matrix: number[][]): number[][] {
  const d = matrix.length;
  const q = matrix[0]!.length;
  const basis: number[][] = [];
  for (let j = 0; j < q; j++) {
    const column = matrix.map((row) => row[j]!);
    for (const previous of basis) {
      const dot = column.reduce((sum, value, i) => sum + value * previous[i]!, 0);
      for (let i = 0; i < d; i++) column[i]! -= dot * previous[i]!;
    }
    const norm = Math.hypot(...column);
    basis.push(column.map((value) => value / norm));
  }
  return matrix.map((_, i) => basis.map((column) => column[i]!));
}

/** Principal angles (radians, ascending) between the column spans of two d × q orthonormal bases. */
export function principalAngles(a: number[][], b: number[][]): number[] {
  const q = a[0]!.length;
  // Singular values of Aᵀ B are the cosines of the principal angles (Björck & Golub 1973).
  const m = Array.from({ length: q }, (_, i) =>
    Array.from({ length: q }, (_, j) => a.reduce((sum, row, k) => sum + row[i]! * b[k]![j]!, 0)),
  );
  const mtm = Array.from({ length: q }, (_, i) =>
    Array.from({ length: q }, (_, j) => m.reduce((sum, row) => sum + row[i]! * row[j]!, 0)),
  );
  return symmetricEigen(mtm)
    .values.map((value) => Math.acos(Math.min(1, Math.sqrt(Math.max(0, value)))))
    .sort((x, y) => x - y);
}

/** Sample covariance (divisor n, the maximum-likelihood estimate) of row-major data. */
export function sampleCovariance(values: Float32Array, width: number): number[][] {
  const rows = values.length / width;
  const mean = new Array<number>(width).fill(0);
  for (let r = 0; r < rows; r++) for (let j = 0; j < width; j++) mean[j]! += values[r * width + j]! / rows;
  const cov = Array.from({ length: width }, () => new Array<number>(width).fill(0));
  for (let r = 0; r < rows; r++) {
    for (let i = 0; i < width; i++) {
      const di = values[r * width + i]! - mean[i]!;
      for (let j = 0; j < width; j++) cov[i]![j]! += (di * (values[r * width + j]! - mean[j]!)) / rows;
    }
  }
  return cov;
}

/** Euclidean distance between two vectors. */
export function distance(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let sum = 0;
  for (let i = 0; i < a.length; i++) sum += (a[i]! - b[i]!) ** 2;
  return Math.sqrt(sum);
}

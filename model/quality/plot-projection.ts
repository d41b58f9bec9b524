/**
 * The 2-D picture of the rare records: the first two principal components (ml-pca, centred, not
 * rescaled: the codec's features are already on comparable scales) of the real rare train records,
 * with every generator's records projected on the same axes. At most PROJECTION_MAX_POINTS points
 * are kept, shared equally between the origins (real and each generator) and drawn at random within
 * each, so the plot stays light and no origin crowds out the others.
 */
import { PCA } from 'ml-pca';
import type { Prng } from '../random.js';
import { sampleIndices } from './evaluation-streams.js';
import { rowOf, type FeatureRows } from './feature-rows.js';
import type { GeneratorName, ProjectedPoint } from './quality-report.js';

export const PROJECTION_MAX_POINTS = 3000;

export interface ProjectionGroup {
  readonly origin: 'real' | GeneratorName;
  readonly className: string;
  readonly rows: FeatureRows;
}

export function projectRareRecords(groups: readonly ProjectionGroup[], prng: Prng): ProjectedPoint[] {
  const real = groups.filter((group) => group.origin === 'real');
  const realCount = real.reduce((sum, group) => sum + group.rows.count, 0);
  if (realCount < 2) return [];
  const fitRows = real.flatMap((group) => Array.from({ length: group.rows.count }, (_, i) => Array.from(rowOf(group.rows, i))));
  const pca = new PCA(fitRows, { center: true, scale: false });
  const components = Math.min(2, pca.getEigenvectors().columns);

  const origins = [...new Set(groups.map((group) => group.origin))];
  const perOrigin = Math.floor(PROJECTION_MAX_POINTS / origins.length);
  const points: ProjectedPoint[] = [];
  for (const origin of origins) {
    const members = groups.filter((group) => group.origin === origin).flatMap((group) => Array.from({ length: group.rows.count }, (_, row) => ({ group, row })));
    const kept = sampleIndices(members.length, perOrigin, prng).sort((a, b) => a - b).map((i) => members[i]!);
    if (kept.length === 0) continue;
    const projected = pca.predict(kept.map(({ group, row }) => Array.from(rowOf(group.rows, row))), { nComponents: components });
    kept.forEach(({ group }, i) =>
      points.push({ x: projected.get(i, 0), y: components > 1 ? projected.get(i, 1) : 0, origin, className: group.className }),
    );
  }
  return points;
}

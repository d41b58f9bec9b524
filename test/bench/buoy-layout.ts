import type { FeatureBlock, FeatureLayout } from '../../model/features/layout.js';

/**
 * The feature layout the model benchmarks share (bench:vae, bench:drift): an invented weather buoy with
 * 22 continuous readings (one of them, gust, nullable), a 4-way and a 3-way categorical: width 30.
 */
export function buoyLayout(): FeatureLayout {
  const blocks: FeatureBlock[] = [];
  for (let i = 0; i < 21; i++) blocks.push({ kind: 'continuous', path: `reading${i}`, offset: i, width: 1 });
  blocks.push({ kind: 'categorical', path: 'sea_state', offset: 21, width: 4, categories: ['calm', 'slight', 'moderate', 'rough'] });
  blocks.push({ kind: 'categorical', path: 'buoy_mode', offset: 25, width: 3, categories: ['normal', 'saving', 'alarm'] });
  blocks.push({ kind: 'presence', path: 'gust', offset: 28, width: 1 });
  blocks.push({ kind: 'continuous', path: 'gust', offset: 29, width: 1, gatedBy: 28 });
  return { width: 30, blocks };
}

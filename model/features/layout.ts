/**
 * The contract between the feature codec (records ⇄ feature vectors) and the model.
 *
 * A feature vector is a flat Float32Array of `width` numbers made of blocks laid side by side.
 * The codec fills blocks from a record; the model learns one likelihood head per block and, when
 * sampling, draws a value for each block (a Gaussian draw, a one-hot category, a 0/1 presence),
 * so a sampled vector is always something the codec can decode.
 */

/** A number on the standard-normal scale (the codec Gaussianises each marginal). Width 1. */
export interface ContinuousBlock {
  readonly kind: 'continuous';
  /** Dotted path of the field in the record, e.g. `reading.pressure`. */
  readonly path: string;
  readonly offset: number;
  readonly width: 1;
  /** Offset of the presence block that gates this one (nullable fields); its loss is masked when absent. */
  readonly gatedBy?: number;
}

/** A one-hot group over `categories` (enum symbols, booleans, low-cardinality strings). */
export interface CategoricalBlock {
  readonly kind: 'categorical';
  readonly path: string;
  readonly offset: number;
  readonly width: number;
  readonly categories: readonly string[];
  readonly gatedBy?: number;
}

/** 1 when a nullable field holds a value, 0 when it is null. Width 1; modelled as a Bernoulli logit. */
export interface PresenceBlock {
  readonly kind: 'presence';
  readonly path: string;
  readonly offset: number;
  readonly width: 1;
}

export type FeatureBlock = ContinuousBlock | CategoricalBlock | PresenceBlock;

export interface FeatureLayout {
  /** Total number of features: the sum of the blocks' widths. */
  readonly width: number;
  /** Blocks in offset order, without gaps. */
  readonly blocks: readonly FeatureBlock[];
}

/** Checks the invariants the model relies on; returns the layout so it can wrap a constructor. */
export function assertValidLayout(layout: FeatureLayout): FeatureLayout {
  let expected = 0;
  for (const block of layout.blocks) {
    if (block.offset !== expected) {
      throw new Error(`feature layout: block "${block.path}" starts at ${block.offset}, expected ${expected}`);
    }
    if (block.kind === 'categorical' && block.width !== block.categories.length) {
      throw new Error(`feature layout: block "${block.path}" has width ${block.width} but ${block.categories.length} categories`);
    }
    if (block.width < 1) throw new Error(`feature layout: block "${block.path}" has width ${block.width}`);
    expected += block.width;
  }
  if (expected !== layout.width) {
    throw new Error(`feature layout: blocks cover ${expected} features, layout says ${layout.width}`);
  }
  return layout;
}

/**
 * The numbers of one evaluation, as plain JSON: `raretide evaluate` writes this object as its JSON
 * output and the HTML report renders it and nothing else, so the two can never disagree.
 *
 * Every comparison is between generators run on the same stratified train split and scored on the
 * same real holdout; synthetic records are never scored as if they were real.
 */

export const QUALITY_REPORT_FORMAT = 'raretide.quality-report';
export const QUALITY_REPORT_VERSION = 1;

/** The generators compared side by side; `none` trains on the real train split alone. */
export const GENERATOR_NAMES = ['none', 'duplication', 'smote', 'gaussian-copula', 'vae'] as const;
export type GeneratorName = (typeof GENERATOR_NAMES)[number];

/** A point estimate with a two-sided percentile bootstrap interval. */
export interface Interval {
  readonly estimate: number;
  readonly low: number;
  readonly high: number;
}

export interface FieldFidelity {
  /** Dotted path of the leaf field, as in `raretide inspect`. */
  readonly field: string;
  /** `ks` for continuous fields (two-sample Kolmogorov–Smirnov D), `tvd` for categorical ones. */
  readonly statistic: 'ks' | 'tvd';
  readonly value: number;
}

/** How close one generator's synthetic records of one rare class are to the real ones of the train split. */
export interface ClassFidelity {
  readonly className: string;
  readonly fields: readonly FieldFidelity[];
  /** Mean absolute difference of the pairwise Pearson correlations of the continuous features. */
  readonly correlationDifference: number;
  /**
   * Cross-validated ROC-AUC of a classifier told to separate real from synthetic records of the
   * class: 0.5 means it cannot tell them apart, 1 means it always can.
   */
  readonly detectionAuc: Interval;
  /** Share of synthetic records a classifier trained on real data assigns to the intended class. */
  readonly labelFidelity: number;
}

/** Distances in standardised feature units (the feature codec's space). */
export interface DistancePercentiles {
  readonly p5: number;
  readonly p50: number;
  readonly p95: number;
}

export interface ClassPrivacy {
  readonly className: string;
  /** Synthetic records equal, field for field, to a real train record. Must be 0. */
  readonly exactCopies: number;
  /** Distance from each synthetic record to its closest real train record. */
  readonly syntheticToTrain: DistancePercentiles;
  /** The yardstick: distance from each real holdout record to its closest real train record. */
  readonly holdoutToTrain: DistancePercentiles;
}

/** One-vs-rest scores of one rare class on the real holdout. */
export interface ClassScores {
  readonly className: string;
  readonly precision: Interval;
  readonly recall: Interval;
  readonly f1: Interval;
  readonly prAuc: Interval;
  readonly rocAuc: Interval;
}

export type ClassifierName = 'logistic-regression' | 'random-forest';

export interface Usefulness {
  readonly classifier: ClassifierName;
  readonly classes: readonly ClassScores[];
}

export interface GeneratorResult {
  readonly generator: GeneratorName;
  /** Synthetic records made for each rare class (0 for every class under `none`). */
  readonly syntheticCounts: Readonly<Record<string, number>>;
  /** Absent for `none`, which makes nothing to compare. */
  readonly fidelity?: readonly ClassFidelity[];
  readonly privacy?: readonly ClassPrivacy[];
  readonly usefulness: readonly Usefulness[];
  /** Wall time of making the records (not of scoring them), ms. */
  readonly generationMs: number;
}

/** Per-field real vs synthetic distributions of the rare records, for the plots. */
export type FieldDistribution =
  | {
      readonly field: string;
      readonly kind: 'continuous';
      /** Bin edges, ascending, one more than each count array. */
      readonly edges: readonly number[];
      readonly real: readonly number[];
      /** Counts per generator that made records. */
      readonly synthetic: Readonly<Partial<Record<GeneratorName, readonly number[]>>>;
    }
  | {
      readonly field: string;
      readonly kind: 'categorical';
      readonly categories: readonly string[];
      readonly real: readonly number[];
      readonly synthetic: Readonly<Partial<Record<GeneratorName, readonly number[]>>>;
    };

export interface CorrelationMatrix {
  /** Continuous feature names, the rows and columns of `values`. */
  readonly fields: readonly string[];
  readonly values: readonly (readonly number[])[];
}

export interface ProjectedPoint {
  readonly x: number;
  readonly y: number;
  /** `real` or the generator that made the record. */
  readonly origin: 'real' | GeneratorName;
  readonly className: string;
}

export interface QualityPlots {
  /** Keyed by rare class. */
  readonly distributions: Readonly<Record<string, readonly FieldDistribution[]>>;
  /** Real rare records, and the VAE's synthetic ones, keyed by rare class. */
  readonly correlations: Readonly<Record<string, { readonly real: CorrelationMatrix; readonly vae: CorrelationMatrix }>>;
  /** First two principal components of the real rare records, with every generator's records projected on them. */
  readonly projection: readonly ProjectedPoint[];
}

export interface Verdict {
  /** One plain sentence: does the VAE's augmentation help here, compared with the baselines? */
  readonly headline: string;
  /** Short supporting sentences, including warnings (copies, easily detected records). */
  readonly details: readonly string[];
}

export interface QualityReport {
  readonly format: typeof QUALITY_REPORT_FORMAT;
  readonly version: typeof QUALITY_REPORT_VERSION;
  readonly createdAt: string;
  readonly input: {
    /** Where the real records came from, e.g. a file path or `topic sorter.events (snapshot)`. */
    readonly source: string;
    readonly modelId: string;
    readonly labelPath: string;
    readonly seed: number;
    readonly k: number;
    readonly temperature: number;
    /** Real records per class in the train and holdout splits. */
    readonly train: Readonly<Record<string, number>>;
    readonly holdout: Readonly<Record<string, number>>;
    readonly rareClasses: readonly string[];
    /** How the holdout was made: a share of the input (stratified, seeded) or a given file. */
    readonly holdoutFrom: string;
  };
  readonly generators: readonly GeneratorResult[];
  readonly plots: QualityPlots;
  readonly verdict: Verdict;
  /** Wall time of the whole evaluation, ms. */
  readonly elapsedMs: number;
}

/** A real record with its class, as the connector's label rule read it. */
export interface LabelledRecord {
  readonly record: import('../features/avro-types.js').AvroRecord;
  readonly className: string;
}

/** What `evaluateQuality` (model/quality/evaluate.ts) takes; the CLI reads records and config into this. */
export interface EvaluationInput {
  /** Real records; split into train and holdout unless `holdout` is given. */
  readonly records: readonly LabelledRecord[];
  /** A given real holdout; then every record of `records` is train. */
  readonly holdout?: readonly LabelledRecord[];
  /** Describes `records` for the report, e.g. the file path. */
  readonly sourceDescription: string;
  readonly model: import('../trained-model.js').TrainedModel;
  /** The classes to oversample (the config's balance targets); each must occur in the train split. */
  readonly rareClasses: readonly string[];
}

export interface EvaluationOptions {
  readonly seed: number;
  /** Share of each class held out when no holdout is given. @default 0.25 */
  readonly holdoutShare?: number;
  /** Synthetic records per real rare train record, for every generator. */
  readonly k: number;
  readonly temperature: number;
  /** Bootstrap resamples of the holdout for the intervals. @default 200 */
  readonly bootstrapResamples?: number;
  /** Called with a stage name and a fraction done in [0, 1], for a progress bar. */
  readonly onProgress?: (stage: string, done: number) => void;
  /** Monotonic ms clock, for the timings. @default performance.now */
  readonly now?: () => number;
}

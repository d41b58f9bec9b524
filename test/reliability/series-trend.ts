/**
 * Is a sampled series flat? The ordinary least-squares slope of y on t (any statistics handbook:
 * slope = Σ(t − t̄)(y − ȳ) / Σ(t − t̄)²), and the drift it implies over the observed window, slope ×
 * (t_last − t_first), set against a stated allowance.
 */

export interface Sample {
  /** Seconds since the start of the run. */
  readonly t: number;
  readonly y: number;
}

export interface LinearFit {
  readonly slope: number;
  readonly intercept: number;
}

export function leastSquares(samples: readonly Sample[]): LinearFit {
  if (samples.length < 2) throw new Error(`a slope needs at least 2 samples, got ${samples.length}`);
  const meanT = samples.reduce((sum, { t }) => sum + t, 0) / samples.length;
  const meanY = samples.reduce((sum, { y }) => sum + y, 0) / samples.length;
  let covariance = 0;
  let varianceT = 0;
  for (const { t, y } of samples) {
    covariance += (t - meanT) * (y - meanY);
    varianceT += (t - meanT) ** 2;
  }
  if (varianceT === 0) throw new Error('a slope needs samples at two different times at least');
  const slope = covariance / varianceT;
  return { slope, intercept: meanY - slope * meanT };
}

export interface Trend {
  readonly samples: number;
  readonly mean: number;
  readonly min: number;
  readonly max: number;
  /** Units of y per second. */
  readonly slope: number;
  /** slope × window: how far the fitted line moves over the samples. */
  readonly drift: number;
}

export function trendOf(samples: readonly Sample[]): Trend {
  const { slope } = leastSquares(samples);
  const values = samples.map(({ y }) => y);
  const window = samples[samples.length - 1]!.t - samples[0]!.t;
  return {
    samples: samples.length,
    mean: values.reduce((sum, value) => sum + value, 0) / values.length,
    min: Math.min(...values),
    max: Math.max(...values),
    slope,
    drift: slope * window,
  };
}

/** The samples at or after `warmUpSeconds` (the ones a flatness rule judges). */
export function afterWarmUp(samples: readonly Sample[], warmUpSeconds: number): Sample[] {
  return samples.filter(({ t }) => t >= warmUpSeconds);
}

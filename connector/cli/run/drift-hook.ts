/**
 * The worker's ends of drift monitoring (connector/pipeline/drift-monitor.ts): point the monitor at the
 * model in use (at start and after every hot reload), feed it each decoded batch, publish its figures
 * after each batch. A model without a drift reference (fitted before references existed) runs without
 * drift metrics, said once in the log when it is loaded.
 */
import { RaretideError } from '../../../config/errors.js';
import { driftScorerFor, type DriftScorer } from '../../../model/drift/live-scorer.js';
import type { TrainedModel } from '../../../model/trained-model.js';
import type { Logger } from '../../ops/logger.js';
import type { WorkerMetrics } from '../../ops/worker-metrics.js';
import type { DecodedEntry } from '../../pipeline/decode-stage.js';
import type { DriftMonitor } from '../../pipeline/drift-monitor.js';

/** Scores under `model` from now on (the window starts empty), or turns drift metrics off. */
export function followModelForDrift(drift: DriftMonitor, model: TrainedModel, metrics: WorkerMetrics, log: Logger): void {
  metrics.clearDrift();
  let scorer: DriftScorer | undefined;
  try {
    scorer = driftScorerFor(model);
  } catch (error) {
    // A monitoring aid must not stop the stream: say why it is off and carry on.
    if (!(error instanceof RaretideError)) throw error;
    drift.follow(undefined);
    log.warn(`drift metrics are off for model ${model.id}: ${error.message}`, { modelId: model.id });
    return;
  }
  drift.follow(scorer);
  if (scorer === undefined) {
    log.info(`model ${model.id} has no drift reference (fitted before drift metrics existed), so the raretide_drift_* metrics are off; refit it with \`raretide fit\` to enable them`, { modelId: model.id });
    return;
  }
  const { rows, count, p50, p99 } = scorer.reference;
  log.info(`drift: scoring 1 in ${drift.settings.sampleOneIn} records under model ${model.id} (reference negative ELBO p50 ${p50.toFixed(2)}, p99 ${p99.toFixed(2)} nats over ${count} ${rows} rows)`, {
    modelId: model.id,
  });
}

/**
 * Hands a decoded batch to the monitor. Scoring never fails a batch: should it throw (a bug, a tensor
 * backend fault), drift monitoring turns off with a warning until the next model is loaded.
 */
export function observeForDrift(drift: DriftMonitor, entries: readonly DecodedEntry[], metrics: WorkerMetrics, log: Logger): void {
  try {
    drift.observe(entries);
  } catch (error) {
    drift.follow(undefined);
    metrics.clearDrift();
    log.warn('drift metrics are off until the next model is loaded: scoring records failed', { error });
  }
}

/** Sets the drift gauges from the monitor's current figures (none before the first scores). */
export function publishDrift(drift: DriftMonitor, metrics: WorkerMetrics): void {
  const figures = drift.figures();
  if (figures !== undefined) metrics.setDriftWindow(figures);
}

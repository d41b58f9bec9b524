/** The conditional VAE: public API for `raretide fit`, the pipeline's sampler and the guard. */
export {
  BACKEND_ENV_VARIABLE,
  INFERENCE_CHUNK_ROWS,
  activeBackendName,
  inferenceChunkRows,
  initBackend,
  type BackendName,
  type BackendOptions,
} from './backend.js';
export {
  GUARD_FILE,
  MANIFEST_FILE,
  WEIGHTS_FILE,
  computeModelId,
  loadModel,
  saveModel,
  type Attachments,
  type LoadedModel,
  type ModelBundle,
} from './artifact.js';
export { assertValidTrainingData, type TrainingData } from './dataset.js';
export {
  DEFAULT_MAX_ROWS_PER_CLASS,
  DEFAULT_PRIVACY_GUARD,
  applyPrivacyGuard,
  buildGuardReference,
  scaledDistance,
  type GuardCandidate,
  type GuardCounts,
  type GuardReference,
  type GuardResult,
  type GuardScope,
  type PrivacyGuardOptions,
} from './guard.js';
export { DEFAULT_HYPER_PARAMETERS, resolveHyperParameters, type VaeHyperParameters } from './hyperparameters.js';
export type { ConditionalVae, VaeTopology } from './network.js';
export {
  elbo,
  reconstruct,
  samplePosterior,
  type PosteriorSample,
  type SamplingModel,
  type SamplingOptions,
  type SourceRow,
} from './sampler.js';
export { trainVae, type EpochReport, type TrainOptions, type TrainedVae } from './train.js';

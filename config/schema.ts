import * as z from 'zod';
import { balanceSection } from './sections/balance.js';
import { deliverySection } from './sections/delivery.js';
import { fieldsSection } from './sections/fields.js';
import { kafkaSection } from './sections/kafka.js';
import { labelSection } from './sections/label.js';
import { logSection } from './sections/log.js';
import { metricsSection } from './sections/metrics.js';
import { modelSection } from './sections/model.js';
import { rateCapSection } from './sections/rate-cap.js';
import { sinkSection } from './sections/sink.js';
import { sourceSection } from './sections/source.js';
import { trainingSection } from './sections/training.js';

/**
 * The one schema of a raretide config file; every config type is inferred from it.
 *
 * Sections a command needs but that have no sensible default (`kafka`, `source`, `sink`, `label`,
 * `balance`, `model`) are optional here, so one file can serve `fit` (no Kafka) as well as `run`;
 * each command asks for its sections with `requireSections`, which names what is missing. Sections
 * made only of defaults (`delivery`, `fields`, `training`, `metrics`, `log`) are always present after
 * parsing. `rateCap` absent means no cap.
 */
export const configSchema = z
  .object({
    /** Kafka connection, needed by commands that read or write topics. */
    kafka: kafkaSection.optional(),
    /** The topic of real records. */
    source: sourceSection.optional(),
    /** Where synthetic records and dead letters go. */
    sink: sinkSection.optional(),
    /** Where each record's class comes from. */
    label: labelSection.optional(),
    /** The class-balance target. */
    balance: balanceSection.optional(),
    /** Cap on synthetic records per second; absent: no cap. */
    rateCap: rateCapSection.optional(),
    /**
     * Delivery guarantee and batching.
     * @default {}
     */
    delivery: deliverySection.prefault({}),
    /** The trained model and its privacy guard. */
    model: modelSection.optional(),
    /**
     * Field policies overriding the inferred ones.
     * @default {}
     */
    fields: fieldsSection,
    /**
     * VAE hyper-parameters.
     * @default {}
     */
    training: trainingSection.prefault({}),
    /**
     * Metrics and health endpoint.
     * @default {}
     */
    metrics: metricsSection.prefault({}),
    /**
     * Logging.
     * @default {}
     */
    log: logSection.prefault({}),
  })
  .strict()
  .superRefine((config, context) => {
    // The worker must never consume its own output: synthetic records would feed back into the stream.
    const sourceTopic = config.source?.topic;
    if (config.sink === undefined || sourceTopic === undefined) return;
    for (const key of ['topic', 'deadLetterTopic'] as const) {
      if (config.sink[key] === sourceTopic) {
        context.addIssue({
          code: 'custom',
          path: ['sink', key],
          input: sourceTopic,
          message: 'same topic as source.topic, so the worker would consume its own output; choose another topic',
        });
      }
    }
  });

/** A validated config, all defaults filled in. */
export type RaretideConfig = z.infer<typeof configSchema>;
/** What a config file may contain before defaults are applied. */
export type RaretideConfigInput = z.input<typeof configSchema>;

export type { BalanceConfig, CountingConfig } from './sections/balance.js';
export type { DeliveryConfig } from './sections/delivery.js';
export type { FieldPolicy, FieldsConfig } from './sections/fields.js';
export type { FramingConfig } from './sections/framing.js';
export type { KafkaConfig } from './sections/kafka.js';
export type { LabelConfig } from './sections/label.js';
export type { LogConfig } from './sections/log.js';
export type { MetricsConfig } from './sections/metrics.js';
export type { ModelConfig, PrivacyGuardConfig } from './sections/model.js';
export type { RateCapConfig } from './sections/rate-cap.js';
export type { SinkConfig } from './sections/sink.js';
export type { SourceConfig } from './sections/source.js';
export type { TrainingConfig } from './sections/training.js';

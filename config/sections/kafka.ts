import * as z from 'zod';

/** `host:port` entries separated by commas, optional spaces around them. */
const BROKER_LIST = /^\s*[^\s,:]+:\d{1,5}\s*(,\s*[^\s,:]+:\d{1,5}\s*)*$/;

/**
 * librdkafka properties raretide sets itself from other config fields; setting them here as well would
 * silently fight those fields, so they are refused with a pointer to the right place.
 */
const OWNED_SETTINGS: Readonly<Record<string, string>> = {
  'bootstrap.servers': 'set kafka.brokers instead',
  'metadata.broker.list': 'set kafka.brokers instead',
  'group.id': 'set source.group instead',
  'enable.auto.commit': 'raretide commits offsets itself; choose delivery.guarantee instead',
  'isolation.level': 'derived from delivery.guarantee; remove it',
  'transactional.id': 'derived from delivery.guarantee and source.group; remove it',
};

const settingValue = z.union([z.string(), z.number(), z.boolean()], {
  error: 'expected a string, number or boolean librdkafka property value',
});

export const kafkaSection = z
  .object({
    /** Bootstrap brokers as a comma-separated `host:port` list. */
    brokers: z
      .string({ error: 'expected a comma-separated host:port list' })
      .regex(BROKER_LIST, { error: 'expected a comma-separated host:port list' })
      .meta({ description: 'Bootstrap brokers, a comma-separated `host:port` list.', examples: ['127.0.0.1:9092'] }),
    /**
     * Extra librdkafka properties passed to both consumer and producer unchanged, typically security
     * (`security.protocol`, `sasl.mechanisms`, `ssl.ca.location`) and timeouts.
     * @default {}
     */
    settings: z
      .record(z.string().meta({ title: 'property' }), settingValue)
      .superRefine((settings, context) => {
        for (const key of Object.keys(settings)) {
          const fix = OWNED_SETTINGS[key];
          if (fix !== undefined) {
            context.addIssue({ code: 'custom', path: [key], input: settings[key], message: `raretide sets this property; ${fix}` });
          }
        }
      })
      .default({})
      .meta({
        description: 'Extra librdkafka properties passed through unchanged (security, timeouts).',
        examples: [{ 'security.protocol': 'SASL_SSL' }],
      }),
  })
  .strict()
  .meta({ description: 'Connection to the Kafka cluster, shared by consumer and producer.' });

export type KafkaConfig = z.infer<typeof kafkaSection>;

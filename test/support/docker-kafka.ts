/**
 * The Docker route to a test broker, through testcontainers. Loaded lazily so runs that use
 * KAFKA_BROKERS or the local broker do not pay for importing testcontainers.
 */

/**
 * Confluent's image 8.1 carries Apache Kafka 4.1 (from memory of Confluent's version table);
 * RARETIDE_TEST_KAFKA_IMAGE picks another.
 */
const DEFAULT_IMAGE = 'confluentinc/cp-kafka:8.1.0';

/** The port KafkaContainer publishes its PLAINTEXT listener on, inside the container. */
const KAFKA_CONTAINER_PORT = 9093;

export interface DockerBroker {
  brokers: string;
  image: string;
  stop(): Promise<void>;
}

/** True when testcontainers finds a working container engine within `timeoutMs`. */
export async function isDockerReachable(timeoutMs: number): Promise<boolean> {
  const { getContainerRuntimeClient } = await import('testcontainers');
  let timer: NodeJS.Timeout | undefined;
  const timedOut = new Promise<boolean>((resolve) => { timer = setTimeout(() => resolve(false), timeoutMs); });
  try {
    return await Promise.race([getContainerRuntimeClient().then(() => true, () => false), timedOut]);
  } finally {
    clearTimeout(timer);
  }
}

export async function startDockerBroker(image = process.env.RARETIDE_TEST_KAFKA_IMAGE || DEFAULT_IMAGE): Promise<DockerBroker> {
  const { KafkaContainer } = await import('@testcontainers/kafka');
  const container = await new KafkaContainer(image)
    // KafkaContainer sets the offsets topic to one replica but not the transaction state or
    // share-group topics; a single broker needs them at one replica too.
    .withEnvironment({
      KAFKA_TRANSACTION_STATE_LOG_REPLICATION_FACTOR: '1',
      KAFKA_TRANSACTION_STATE_LOG_NUM_PARTITIONS: '1',
      KAFKA_SHARE_COORDINATOR_STATE_TOPIC_REPLICATION_FACTOR: '1',
      KAFKA_SHARE_COORDINATOR_STATE_TOPIC_MIN_ISR: '1',
    })
    .start();
  return {
    brokers: `${container.getHost()}:${container.getMappedPort(KAFKA_CONTAINER_PORT)}`,
    image,
    stop: async () => { await container.stop(); },
  };
}

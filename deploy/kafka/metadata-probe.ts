import Kafka from 'node-rdkafka';

/**
 * Confirms a broker answers a Metadata request — an open port alone can belong to a broker
 * still starting up. Resolves with the number of brokers the cluster reports.
 */
export function probeMetadata(brokers: string, timeoutMs: number): Promise<number> {
  const producer = new Kafka.Producer({ 'metadata.broker.list': brokers, 'client.id': 'raretide-readiness-probe' });
  return new Promise((resolve, reject) => {
    producer.connect({ timeout: timeoutMs }, (error, metadata) => {
      if (error) {
        reject(new Error(`no Metadata answer from ${brokers} within ${timeoutMs} ms: ${error.message}`));
        return;
      }
      producer.disconnect(() => {
        if (metadata.brokers.length === 0) reject(new Error(`${brokers} answered Metadata but listed no brokers`));
        else resolve(metadata.brokers.length);
      });
    });
  });
}

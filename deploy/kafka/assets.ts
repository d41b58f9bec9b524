import { existsSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The Apache Kafka release the local broker runs; must match pom.xml. */
export const KAFKA_VERSION = '4.1.1';

/**
 * The directory holding pom.xml and log4j2.yaml. Run from source (tsx, vitest) that is this
 * file's own directory; compiled by tsc into dist/deploy/kafka the non-TS files stay behind
 * in the package's deploy/kafka, three levels up.
 */
export function kafkaAssetsDir(): string {
  const here = dirname(fileURLToPath(import.meta.url));
  const candidates = [here, resolve(here, '../../../deploy/kafka')];
  const found = candidates.find((dir) => existsSync(resolve(dir, 'pom.xml')));
  if (!found) throw new Error(`cannot find deploy/kafka/pom.xml near ${here}; is the package's deploy/ directory present?`);
  return found;
}

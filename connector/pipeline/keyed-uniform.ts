import { RaretideError } from '../../config/errors.js';
import { recordStreams, type Seed } from '../../model/random.js';
import type { BalanceRecord, UniformSource } from './balance.js';
import { describePartition } from './topic-partition.js';

/** Stands in for the model id in the stream key; model ids are hex digits, so the streams never meet. */
const ROUNDING_STREAM = 'balance.rounding';

/**
 * The balance controller's rounding draws, one per record, keyed by (seed, topic, partition, offset)
 * through the same keyed streams that make synthetic samples (model/random.ts). A record's draw is
 * then the same whatever records of other partitions came between, so a replay rounds exactly as the
 * first run did even when the partitions interleave differently.
 */
export class KeyedUniform implements UniformSource {
  constructor(private readonly seed: Seed) {}

  uniform(record: BalanceRecord): number {
    if (record.offset === undefined) {
      throw new RaretideError(
        'balance.unkeyed-record',
        `A rounding draw for ${describePartition(record)} came without the record's offset; plan records with their offsets so draws repeat.`,
      );
    }
    const key = { topic: record.topic, partition: record.partition, offset: record.offset };
    return recordStreams(this.seed, ROUNDING_STREAM, key).sample(0).uniform();
  }
}

import { SplitMix64, mix64, type Seed } from '../../model/random.js';

/** Keeps the marker's stream apart from every other use of the seed. */
const SYNC_MARKER_TAG = 0x73796e632d6d6b72n;

/**
 * The 16-byte container sync marker of a replay's output file, from the run's seed: the Avro
 * specification only asks for 16 random bytes, and taking them from the seed makes the output
 * byte-identical run to run (two SplitMix64 outputs, big-endian).
 */
export function syncMarkerFor(seed: Seed): Buffer {
  const stream = new SplitMix64(mix64(BigInt(seed)) ^ SYNC_MARKER_TAG);
  const marker = Buffer.alloc(16);
  marker.writeBigUInt64BE(stream.next(), 0);
  marker.writeBigUInt64BE(stream.next(), 8);
  return marker;
}

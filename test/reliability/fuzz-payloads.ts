/**
 * Fuzzed payloads for the bad-input scenario, from the seeded PRNG: random bytes, and valid sorter
 * events broken in the ways real streams break them (cut short, extra bytes, flipped bits, lengths and
 * indices out of range, NaN in a double, an empty value). Some mutations still decode — a flipped bit in
 * a double is just another double — so each payload's fate is decided by an oracle outside raretide's
 * decoder: avsc's own strict reader of the writer schema (it refuses truncated input and trailing
 * bytes), then the worker's documented value rules (finite doubles, a label the model knows).
 */
import avro from 'avsc';

import { seededRandom } from '../support/seeded-random.js';
import { sorterEvents } from '../support/run-worker-scenario.js';
import { SORTER_EVENT_SCHEMA } from '../unit/pipeline/support/sorter-events.js';

export const FUZZ_KINDS = [
  'random-bytes',
  'large-random',
  'empty',
  'truncated',
  'trailing-bytes',
  'bit-flips',
  'huge-length',
  'negative-length',
  'bad-union-index',
  'bad-enum-index',
  'non-finite-double',
] as const;
export type FuzzKind = (typeof FUZZ_KINDS)[number];

export interface FuzzPayload {
  readonly kind: FuzzKind;
  readonly value: Buffer;
}

/** avsc straight from the schema JSON: the oracle shares no code with raretide's decoder. */
const writerType = avro.Type.forSchema(SORTER_EVENT_SCHEMA as unknown as avro.Schema);

/** `count` payloads, kinds in turn, each made from the PRNG seeded with `seed`. */
export function fuzzPayloads(count: number, seed: number): FuzzPayload[] {
  const random = seededRandom(seed);
  const between = (low: number, high: number) => low + Math.floor(random() * (high - low + 1));
  const bytes = (length: number) => Buffer.from(Array.from({ length }, () => between(0, 255)));
  // Valid events to break; every one of them labelled (outcome is the last field: union index, enum index).
  const valid = sorterEvents(count, { jam: 0.3, misroute: 0.3 }, seed).map((event) => writerType.toBuffer(event));
  return Array.from({ length: count }, (_, index) => {
    const kind = FUZZ_KINDS[index % FUZZ_KINDS.length]!;
    const base = valid[index]!;
    return { kind, value: mutate(kind, base) };
  });

  function mutate(kind: FuzzKind, base: Buffer): Buffer {
    switch (kind) {
      case 'random-bytes':
        return bytes(between(1, 64));
      case 'large-random':
        return bytes(between(1_024, 16_384));
      case 'empty':
        return Buffer.alloc(0);
      case 'truncated':
        return base.subarray(0, between(0, base.length - 1));
      case 'trailing-bytes':
        return Buffer.concat([base, bytes(between(1, 8))]);
      case 'bit-flips': {
        const flipped = Buffer.from(base);
        for (let flip = between(1, 3); flip > 0; flip--) {
          const bit = between(0, flipped.length * 8 - 1);
          flipped[bit >> 3] = flipped[bit >> 3]! ^ (1 << (bit & 7));
        }
        return flipped;
      }
      case 'huge-length':
        // parcelId's length as a zig-zag varint of 2^31 − 1, far beyond the payload.
        return Buffer.concat([Buffer.from([0xfe, 0xff, 0xff, 0xff, 0x0f]), bytes(between(0, 32))]);
      case 'negative-length':
        // Zig-zag 0x01 is −1: a length no encoder writes.
        return Buffer.concat([Buffer.from([0x01]), base.subarray(1)]);
      case 'bad-union-index': {
        // The union index before the enum index: zig-zag 5 names a branch the 2-branch union lacks.
        const broken = Buffer.from(base);
        broken[broken.length - 2] = 0x0a;
        return broken;
      }
      case 'bad-enum-index': {
        // Zig-zag 9: the enum has 4 symbols.
        const broken = Buffer.from(base);
        broken[broken.length - 1] = 0x12;
        return broken;
      }
      case 'non-finite-double': {
        const event = writerType.fromBuffer(base) as Record<string, unknown>;
        return writerType.toBuffer({ ...event, [random() < 0.5 ? 'weightKg' : 'beltSpeed']: [NaN, Infinity, -Infinity][between(0, 2)] });
      }
    }
  }
}

/**
 * Whether the worker should serve a payload (true) or dead-letter it (false): it must decode under avsc's
 * strict reading, its doubles must be finite, and its label one of `classes`.
 */
export function shouldServe(value: Buffer, classes: readonly string[]): boolean {
  let record: { weightKg: number; beltSpeed: number; outcome: string | null };
  try {
    record = writerType.fromBuffer(value) as typeof record;
  } catch {
    return false;
  }
  return Number.isFinite(record.weightKg) && Number.isFinite(record.beltSpeed) && record.outcome !== null && classes.includes(record.outcome);
}

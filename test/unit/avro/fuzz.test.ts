import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Framing } from '../../../connector/avro/framing.js';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import { PayloadDecoder } from '../../../connector/avro/payload-decoder.js';
import type { DecodeProblemCode } from '../../../connector/avro/problems.js';
import { RawFraming } from '../../../connector/avro/raw-framing.js';
import { RegistryFraming } from '../../../connector/avro/registry-framing.js';
import { HttpSchemaRegistry } from '../../../connector/avro/schema-registry.js';
import { SINGLE_OBJECT_MARKER, SingleObjectFraming } from '../../../connector/avro/single-object-framing.js';
import { READING_V1, readingV1 } from './support/schemas.js';
import { startTestRegistry, type TestRegistry } from './support/registry-server.js';

/** A schema made to trip a trusting decoder: zero-byte items, nested blocks, recursion, unions. */
const HOSTILE = {
  type: 'record',
  name: 'Hostile',
  fields: [
    { name: 'nothing', type: { type: 'array', items: 'null' } },
    { name: 'nested', type: { type: 'map', values: { type: 'array', items: 'long' } } },
    { name: 'chain', type: ['null', { type: 'record', name: 'Link', fields: [{ name: 'next', type: ['null', 'Link'] }] }] },
    { name: 'pick', type: ['int', 'string', { type: 'enum', name: 'Side', symbols: ['L', 'R'] }] },
    { name: 'tag', type: { type: 'fixed', name: 'Tag', size: 3 } },
    { name: 'ratio', type: 'double' },
  ],
};
const hostile = knownSchema(HOSTILE, 'hostile.avsc');

const KNOWN_CODES: ReadonlySet<DecodeProblemCode> = new Set([
  'truncated', 'bad-magic', 'malformed', 'unknown-fingerprint', 'unknown-schema-id', 'schema-mismatch',
  'non-finite-double', 'registry-unreachable', 'registry-invalid-response', 'missing-label',
]);
/** Hang guard per call: generous, since the machine is shared; a hang would take seconds or forever. */
const MAX_CALL_MS = 1000;

let registry: TestRegistry;
beforeAll(async () => {
  registry = await startTestRegistry({ 1: READING_V1, 2: HOSTILE });
});
afterAll(async () => registry.close());

interface Case {
  readonly framing: () => Framing;
  /** Valid headers that reach the body, each written before random bytes. */
  readonly headers: readonly Buffer[];
}

const cases: Record<string, Case> = {
  'raw (reading)': { framing: () => new RawFraming(readingV1), headers: [Buffer.alloc(0)] },
  'raw (hostile)': { framing: () => new RawFraming(hostile), headers: [Buffer.alloc(0)] },
  'single-object': {
    framing: () => new SingleObjectFraming([readingV1, hostile]),
    headers: [readingV1, hostile].map((schema) => Buffer.concat([SINGLE_OBJECT_MARKER, schema.fingerprint.bytes])),
  },
  registry: {
    framing: () => new RegistryFraming(new HttpSchemaRegistry({ url: registry.url })),
    headers: [Buffer.from([0, 0, 0, 0, 1]), Buffer.from([0, 0, 0, 0, 2])],
  },
};

// Seeded, so a failure replays; fast-check prints the seed and the shrunk input if one fails.
describe.each(Object.entries(cases))('fuzz: %s framing', (_name, { framing, headers }) => {
  // One decoder per framing, as in the worker: the registry client's cache is part of what is fuzzed.
  // Built on first use: the registry server starts in beforeAll.
  let decoder: PayloadDecoder | undefined;

  async function check(payload: Uint8Array, seen: Map<string, number>): Promise<void> {
    decoder ??= new PayloadDecoder(framing());
    const started = performance.now();
    const result = await decoder.decode(payload);
    const elapsed = performance.now() - started;
    // Plain checks rather than expect(): 80,000 calls, and fast-check reports the failing input.
    if (elapsed > MAX_CALL_MS) throw new Error(`decode took ${elapsed.toFixed(0)} ms`);
    if (result.ok) {
      // Random bytes can be a valid record; then it must be one.
      if (!result.value.writer.type.isValid(result.value.value)) throw new Error('decoded an invalid record');
    } else if (!KNOWN_CODES.has(result.problem.code) || result.problem.reason.length === 0) {
      throw new Error(`untyped problem ${JSON.stringify(result.problem)}`);
    }
    const key = result.ok ? 'ok' : result.problem.code;
    seen.set(key, (seen.get(key) ?? 0) + 1);
  }

  it('10,000 random byte strings give only typed problems', async () => {
    const seen = new Map<string, number>();
    await fc.assert(
      fc.asyncProperty(fc.uint8Array({ maxLength: 96 }), (bytes) => check(bytes, seen)),
      { numRuns: 10_000, seed: 20_251_201 },
    );
    expect([...seen.values()].reduce((a, b) => a + b, 0)).toBe(10_000);
  });

  it('10,000 random bodies behind valid headers give only typed problems or valid records', async () => {
    const seen = new Map<string, number>();
    const payload = fc
      .tuple(fc.constantFrom(...headers), fc.uint8Array({ maxLength: 96 }))
      .map(([header, body]) => Buffer.concat([header, body]));
    await fc.assert(fc.asyncProperty(payload, (bytes) => check(bytes, seen)), { numRuns: 10_000, seed: 20_251_202 });
    // The bodies reach the Avro decoder, not just the header checks.
    expect((seen.get('truncated') ?? 0) + (seen.get('malformed') ?? 0)).toBeGreaterThan(5000);
  });
});

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { topicFramings } from '../../../connector/avro/framings-from-config.js';
import { startTestRegistry, type TestRegistry } from './support/registry-server.js';
import { READING_READER, READING_V1, readingV1, sampleReading } from './support/schemas.js';

// Registry wire format: magic byte 0, then the schema id as a 4-byte big-endian integer, then the body.
let registry: TestRegistry;
beforeAll(async () => {
  registry = await startTestRegistry({ 7: READING_V1, 8: READING_READER });
});
afterAll(async () => registry.close());

describe('registry framing for writing', () => {
  it('frames outputs with the configured id after checking that the id holds the output schema', async () => {
    const { input, output } = await topicFramings({ kind: 'registry', url: registry.url }, { kind: 'registry', url: registry.url, outputSchemaId: 7 }, readingV1);
    const record = sampleReading(3);
    const framed = output.frame(record);
    expect([...framed.subarray(0, 5)]).toEqual([0, 0, 0, 0, 7]);
    const unframed = await input.unframe(framed);
    expect(unframed.ok && unframed.value.writer.fingerprint.hex).toBe(readingV1.fingerprint.hex);
  });

  it('refuses an id that holds another schema, and a registry sink without an id, naming the field and the fix', async () => {
    await expect(topicFramings({ kind: 'registry', url: registry.url }, { kind: 'registry', url: registry.url, outputSchemaId: 8 }, readingV1)).rejects.toThrow(
      /sink\.framing\.outputSchemaId = 8/,
    );
    await expect(topicFramings({ kind: 'registry', url: registry.url }, { kind: 'registry', url: registry.url }, readingV1)).rejects.toThrow(
      /sink\.framing\.outputSchemaId is missing: .*register the output schema/,
    );
  });
});

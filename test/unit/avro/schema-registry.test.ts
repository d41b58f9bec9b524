import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PayloadDecoder } from '../../../connector/avro/payload-decoder.js';
import { RegistryFraming } from '../../../connector/avro/registry-framing.js';
import { HttpSchemaRegistry } from '../../../connector/avro/schema-registry.js';
import { READING_READER, READING_V1, READING_V2_WRITER, readingReader, readingV1, readingV2Writer, sampleReading } from './support/schemas.js';
import { startTestRegistry, type TestRegistry } from './support/registry-server.js';

let registry: TestRegistry;
beforeAll(async () => {
  registry = await startTestRegistry({ 1: READING_V1, 2: READING_V2_WRITER, 3: READING_READER });
});
afterAll(async () => registry.close());

// The registry API used (`GET /schemas/ids/{id}` → `{"schema": "<text>"}`, 404 for an unknown id) is common
// practice of schema registries, not an open standard; the server here is a stand-in on 127.0.0.1.
describe('schema registry over HTTP (127.0.0.1)', () => {
  it('decodes records of two writer versions into the reader schema, fetching each id once', async () => {
    registry.requests.length = 0;
    const decoder = new PayloadDecoder(new RegistryFraming(new HttpSchemaRegistry({ url: `${registry.url}/` })), { reader: readingReader });
    const v1 = new RegistryFraming(new HttpSchemaRegistry({ url: registry.url }), { schema: readingV1, schemaId: 1 });
    const v2 = new RegistryFraming(new HttpSchemaRegistry({ url: registry.url }), { schema: readingV2Writer, schemaId: 2 });
    for (let i = 0; i < 10; i++) {
      const a = await decoder.decode(v1.frame(sampleReading(i)));
      const b = await decoder.decode(v2.frame({ ...sampleReading(i), sensor: 'x' }));
      expect(a.ok && b.ok).toBe(true);
      expect(b.ok && (b.value.value as { region: string }).region).toBe('unknown');
    }
    expect(registry.requests.sort()).toEqual(['/schemas/ids/1', '/schemas/ids/2']);
  });

  it('shares one fetch among concurrent requests for the same id', async () => {
    registry.requests.length = 0;
    let open!: () => void;
    registry.gate = new Promise((resolve) => (open = resolve));
    const client = new HttpSchemaRegistry({ url: registry.url });
    const pending = Array.from({ length: 8 }, () => client.schemaById(3));
    await waitFor(() => registry.requests.length > 0);
    open();
    registry.gate = undefined;
    const results = await Promise.all(pending);
    expect(results.every((result) => result.ok && result.value.fingerprint.hex === readingReader.fingerprint.hex)).toBe(true);
    expect(registry.requests).toEqual(['/schemas/ids/3']);
  });

  it('reports a registry server error as retriable and does not keep the failure', async () => {
    const client = new HttpSchemaRegistry({ url: registry.url });
    registry.failWith = 503;
    const failed = await client.schemaById(1);
    registry.failWith = undefined;
    expect(failed.ok === false && failed.problem).toMatchObject({ code: 'registry-unreachable', retriable: true });
    expect((await client.schemaById(1)).ok).toBe(true);
  });

  it('reports an unreachable registry as a retriable problem, not an exception', async () => {
    const gone = await startTestRegistry({});
    const url = gone.url;
    await gone.close();
    const decoder = new PayloadDecoder(new RegistryFraming(new HttpSchemaRegistry({ url, timeoutMs: 2000 })));
    const result = await decoder.decode(Buffer.from([0, 0, 0, 0, 1, 2]));
    expect(result.ok === false && result.problem).toMatchObject({ code: 'registry-unreachable', retriable: true, offset: 1 });
  });

  it('reports a registry answer that is not an Avro schema', async () => {
    const client = new HttpSchemaRegistry({
      url: 'http://127.0.0.1:1',
      fetch: async () => new Response(JSON.stringify({ schema: '{"type":"protobuf"}' }), { status: 200 }),
    });
    const result = await client.schemaById(5);
    expect(result.ok === false && result.problem.code).toBe('registry-invalid-response');
  });
});

/** Waits on a condition with a deadline (no fixed sleeps). */
async function waitFor(condition: () => boolean, deadlineMs = 5000): Promise<void> {
  const deadline = Date.now() + deadlineMs;
  while (!condition()) {
    if (Date.now() > deadline) throw new Error('condition not met before the deadline');
    await new Promise((resolve) => setImmediate(resolve));
  }
}

import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';

/** A schema registry stand-in on 127.0.0.1 answering `GET /schemas/ids/{id}`. */
export interface TestRegistry {
  readonly url: string;
  /** Requests seen, by path. */
  readonly requests: string[];
  /** Schemas served, by id; tests may add to it. */
  readonly schemas: Map<number, unknown>;
  /** When set, every request answers with this status. */
  failWith: number | undefined;
  /** When set, answers wait until the promise resolves (to hold requests in flight). */
  gate: Promise<void> | undefined;
  close(): Promise<void>;
}

export async function startTestRegistry(schemas: Record<number, unknown>): Promise<TestRegistry> {
  const registry = {
    requests: [] as string[],
    schemas: new Map(Object.entries(schemas).map(([id, schema]) => [Number(id), schema])),
    failWith: undefined as number | undefined,
    gate: undefined as Promise<void> | undefined,
  };
  const server: Server = createServer((request, response) => {
    registry.requests.push(request.url ?? '');
    void (registry.gate ?? Promise.resolve()).then(() => {
      const match = /^\/schemas\/ids\/(\d+)$/.exec(request.url ?? '');
      const schema = match === null ? undefined : registry.schemas.get(Number(match[1]));
      const status = registry.failWith ?? (schema === undefined ? 404 : 200);
      response.writeHead(status, { 'content-type': 'application/vnd.schemaregistry.v1+json' });
      response.end(
        status === 200 ? JSON.stringify({ schema: JSON.stringify(schema) }) : JSON.stringify({ error_code: status * 100 + 3, message: 'not found' }),
      );
    });
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as AddressInfo;
  return Object.assign(registry, {
    url: `http://127.0.0.1:${port}`,
    close: () =>
      new Promise<void>((resolve, reject) => {
        server.closeAllConnections();
        server.close((error) => (error ? reject(error) : resolve()));
      }),
  });
}

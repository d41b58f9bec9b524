import { knownSchema, type KnownSchema } from './known-schema.js';
import { fail, ok, type Result } from './problems.js';

/** Where registry framing finds writer schemas by id. */
export interface SchemaRegistry {
  /** Never throws: an unreachable registry gives a retriable `registry-unreachable` problem.
   *  Answers synchronously for a schema it already holds. */
  schemaById(id: number): Result<KnownSchema> | Promise<Result<KnownSchema>>;
}

export interface HttpSchemaRegistryOptions {
  /** Base URL of the registry, e.g. `http://127.0.0.1:8081`. */
  readonly url: string;
  /** Time allowed for one request, headers and body. @default 5000 */
  readonly timeoutMs?: number;
  /** The HTTP client; a parameter so tests can count calls. @default globalThis.fetch */
  readonly fetch?: typeof fetch;
}

/**
 * A schema registry client over HTTP: `GET {url}/schemas/ids/{id}` answers `{"schema": "<schema
 * JSON text>"}`. Schemas under an id never change, so a fetched schema is kept for good; concurrent
 * requests for one id share one fetch; failures are not kept, so the next record tries again.
 */
export class HttpSchemaRegistry implements SchemaRegistry {
  private readonly baseUrl: string;
  private readonly timeoutMs: number;
  private readonly fetchImpl: typeof fetch;
  private readonly schemas = new Map<number, KnownSchema>();
  private readonly inFlight = new Map<number, Promise<Result<KnownSchema>>>();

  constructor(options: HttpSchemaRegistryOptions) {
    this.baseUrl = options.url.replace(/\/+$/, '');
    this.timeoutMs = options.timeoutMs ?? 5000;
    this.fetchImpl = options.fetch ?? globalThis.fetch;
  }

  schemaById(id: number): Result<KnownSchema> | Promise<Result<KnownSchema>> {
    const known = this.schemas.get(id);
    if (known !== undefined) return ok(known);
    let pending = this.inFlight.get(id);
    if (pending === undefined) {
      pending = this.fetchSchema(id).finally(() => this.inFlight.delete(id));
      this.inFlight.set(id, pending);
    }
    return pending;
  }

  private async fetchSchema(id: number): Promise<Result<KnownSchema>> {
    const url = `${this.baseUrl}/schemas/ids/${id}`;
    const details = { schema: `registry id ${id}` };
    let status: number;
    let text: string;
    try {
      const response = await this.fetchImpl(url, {
        headers: { accept: 'application/vnd.schemaregistry.v1+json, application/json' },
        signal: AbortSignal.timeout(this.timeoutMs),
      });
      status = response.status;
      text = await response.text();
    } catch (cause) {
      return fail('registry-unreachable', `GET ${url} failed: ${describeFetchError(cause)}; check the registry URL and that it is up`, details);
    }
    if (status === 404) return fail('unknown-schema-id', `the registry at ${this.baseUrl} has no schema with id ${id}`, details);
    if (status >= 500 || status === 408 || status === 429) {
      return fail('registry-unreachable', `GET ${url} answered HTTP ${status}`, details);
    }
    if (status !== 200) {
      return fail('registry-invalid-response', `GET ${url} answered HTTP ${status}: ${text.slice(0, 200)}`, details);
    }
    return this.parseAnswer(id, url, text);
  }

  private parseAnswer(id: number, url: string, text: string): Result<KnownSchema> {
    const details = { schema: `registry id ${id}` };
    let answer: { schema?: unknown; schemaType?: unknown };
    try {
      answer = JSON.parse(text) as typeof answer;
    } catch {
      return fail('registry-invalid-response', `GET ${url} answered with text that is not JSON`, details);
    }
    if (answer.schemaType !== undefined && answer.schemaType !== 'AVRO') {
      return fail('registry-invalid-response', `schema id ${id} is a ${String(answer.schemaType)} schema, not Avro`, details);
    }
    if (typeof answer.schema !== 'string') {
      return fail('registry-invalid-response', `GET ${url} answered without a "schema" string`, details);
    }
    try {
      const schema = knownSchema(JSON.parse(answer.schema), `registry id ${id}`);
      this.schemas.set(id, schema);
      return ok(schema);
    } catch (cause) {
      return fail('registry-invalid-response', `schema id ${id} is not a valid Avro schema: ${(cause as Error).message}`, details);
    }
  }
}

function describeFetchError(cause: unknown): string {
  if (!(cause instanceof Error)) return String(cause);
  if (cause.name === 'TimeoutError') return 'no answer within the timeout';
  const inner = cause.cause instanceof Error ? ` (${cause.cause.message})` : '';
  return `${cause.message}${inner}`;
}

import { UsageError } from '../../config/errors.js';
import type { Framing, Unframed } from './framing.js';
import type { KnownSchema } from './known-schema.js';
import { fail, ok, type Result } from './problems.js';
import { encodeRecord } from './record-encoding.js';
import type { SchemaRegistry } from './schema-registry.js';

/** Registry framing header: magic byte 0, then the schema id as a 4-byte big-endian integer. */
const MAGIC = 0;
const HEADER_BYTES = 5;

/** The schema raretide writes with, and the registry id it is registered under. */
export interface RegistryOutput {
  readonly schema: KnownSchema;
  /** Taken from the config: raretide does not register schemas; `checkOutput` verifies the id. */
  readonly schemaId: number;
}

/** Registry framing: byte 0, a 4-byte big-endian schema id, the body. Writer schemas come from the registry. */
export class RegistryFraming implements Framing {
  readonly kind = 'registry';

  constructor(
    private readonly registry: SchemaRegistry,
    private readonly output?: RegistryOutput,
  ) {}

  unframe(payload: Buffer): Result<Unframed> | Promise<Result<Unframed>> {
    if (payload.length === 0) return fail('truncated', 'payload is empty; registry framing starts with byte 00', { offset: 0 });
    if (payload[0] !== MAGIC) {
      return fail('bad-magic', `expected registry magic byte 00, found ${payload[0]!.toString(16).padStart(2, '0').toUpperCase()}`, { offset: 0 });
    }
    if (payload.length < HEADER_BYTES) {
      return fail('truncated', `payload ends inside the 4-byte schema id (${payload.length} of ${HEADER_BYTES} header bytes)`, {
        offset: payload.length,
      });
    }
    const id = payload.readInt32BE(1);
    if (id < 0) return fail('unknown-schema-id', `schema id ${id} is negative; registries assign ids from 0 up`, { offset: 1 });
    const writer = this.registry.schemaById(id);
    return writer instanceof Promise ? writer.then((found) => withBody(found, payload, id)) : withBody(writer, payload, id);
  }

  frame(record: unknown): Buffer {
    const output = this.requireOutput();
    const header = Buffer.alloc(HEADER_BYTES);
    header.writeUInt8(MAGIC, 0);
    header.writeInt32BE(output.schemaId, 1);
    return Buffer.concat([header, encodeRecord(output.schema, record)]);
  }

  /** Checks that the configured output id holds the output schema (same canonical form), so
   *  consumers downstream read what raretide writes. Run once at start-up. */
  async checkOutput(): Promise<Result<void>> {
    const output = this.requireOutput();
    const registered = await this.registry.schemaById(output.schemaId);
    if (!registered.ok) return registered;
    if (registered.value.fingerprint.hex !== output.schema.fingerprint.hex) {
      return fail(
        'schema-mismatch',
        `registry id ${output.schemaId} holds a schema with fingerprint ${registered.value.fingerprint.hex}, but the output schema ` +
          `${output.schema.source} has ${output.schema.fingerprint.hex}; set the output schema id to the id of ${output.schema.source}`,
        { schema: `registry id ${output.schemaId}` },
      );
    }
    return ok(undefined);
  }

  private requireOutput(): RegistryOutput {
    if (this.output === undefined) {
      throw new UsageError('Registry framing for output needs the output schema and its registry schema id; set both in the config.');
    }
    return this.output;
  }
}

function withBody(writer: Result<KnownSchema>, payload: Buffer, id: number): Result<Unframed> {
  if (!writer.ok) return fail(writer.problem.code, writer.problem.reason, { offset: 1, schema: `registry id ${id}` });
  return ok({ writer: writer.value, body: payload.subarray(HEADER_BYTES), bodyOffset: HEADER_BYTES });
}

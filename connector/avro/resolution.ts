import type { Type } from 'avsc';
import type { KnownSchema } from './known-schema.js';
import { fail, ok, type Result } from './problems.js';

/** avsc's resolver object (opaque in its typings). */
export type AvroResolver = ReturnType<Type['createResolver']>;

/**
 * Writer → reader schema resolution (Avro specification, "Schema Resolution"), so records from an
 * evolved producer decode into the schema raretide was configured (or trained) with. One resolver
 * per writer schema, built on first use and kept: building one walks both schemas.
 */
export class ReaderResolution {
  private readonly resolvers = new Map<string, Result<AvroResolver | undefined>>();

  constructor(readonly reader: KnownSchema) {}

  /** The resolver for `writer`; `undefined` when the two read the same bytes and none is needed. */
  resolverFor(writer: KnownSchema): Result<AvroResolver | undefined> {
    const key = writer.fingerprint.hex;
    let resolver = this.resolvers.get(key);
    if (resolver === undefined) {
      resolver = this.build(writer);
      this.resolvers.set(key, resolver);
    }
    return resolver;
  }

  private build(writer: KnownSchema): Result<AvroResolver | undefined> {
    if (writer.fingerprint.hex === this.reader.fingerprint.hex) return ok(undefined);
    try {
      return ok(this.reader.type.createResolver(writer.type));
    } catch (cause) {
      return fail(
        'schema-mismatch',
        `writer schema ${writer.source} cannot be read as reader schema ${this.reader.source}: ${(cause as Error).message}. ` +
          'Give new reader fields a default, or keep the reader schema compatible with the producer.',
        { schema: writer.fingerprint.hex },
      );
    }
  }
}

/**
 * When an original passed through can keep the bytes it came with. Framing a decoded original again
 * gives back what was read whenever input and output frame the same way with the same schema, and the
 * reader schema is that schema too (decoding then changes no field): the payload can then go out as it
 * came in, without re-encoding — the same record, in the bytes its producer wrote.
 *
 * Decided once per run from the framings. Only raw framing carries one fixed writer schema that can be
 * compared up front; single-object and registry framings name a writer per record and keep their output
 * schema to themselves, so their originals are re-encoded.
 */
import type { Framing } from '../avro/framing.js';
import type { KnownSchema } from '../avro/known-schema.js';
import { RawFraming } from '../avro/raw-framing.js';

export function originalsPassUnchanged(input: Framing, output: Framing, reader: KnownSchema): boolean {
  if (!(input instanceof RawFraming && output instanceof RawFraming)) return false;
  const schema = reader.fingerprint.hex;
  return input.schema.fingerprint.hex === schema && output.schema.fingerprint.hex === schema;
}

import { RaretideError } from '../../../config/errors.js';

/**
 * Avro object container file layout (Avro specification, "Object Container Files"):
 * magic `Obj\x01`, a metadata map<bytes> (`avro.schema`, `avro.codec`, user keys), a 16-byte sync
 * marker; then blocks of (record count, byte size, records, sync marker).
 */
export const CONTAINER_MAGIC: Buffer = Buffer.from('Obj\x01', 'latin1');
export const SYNC_MARKER_BYTES = 16;

export const CONTAINER_CODECS = ['null', 'deflate'] as const;
export type ContainerCodec = (typeof CONTAINER_CODECS)[number];

export function isContainerCodec(name: string): name is ContainerCodec {
  return (CONTAINER_CODECS as readonly string[]).includes(name);
}

/** A corrupt or truncated container file, naming the file and the byte offset. */
export function corruptContainer(file: string, offset: number, reason: string): RaretideError {
  return new RaretideError(
    'avro.container-corrupt',
    `Avro container file ${file}: ${reason} at byte ${offset}. The file is truncated or corrupt; rewrite it or drop it from the input.`,
  );
}

import { promisify } from 'node:util';
import { deflateRaw, inflateRaw } from 'node:zlib';
import type { ContainerCodec } from './container-format.js';

const deflateRawAsync = promisify(deflateRaw);
const inflateRawAsync = promisify(inflateRaw);

/** The Avro `deflate` codec is raw DEFLATE (RFC 1951), without zlib's header or checksum. */
export async function compressBlock(codec: ContainerCodec, data: Buffer, level: number): Promise<Buffer> {
  return codec === 'null' ? data : deflateRawAsync(data, { level });
}

/** `maxBytes` stops a corrupt or hostile block from inflating without bound. Rejects on bad data. */
export async function decompressBlock(codec: ContainerCodec, data: Buffer, maxBytes: number): Promise<Buffer> {
  return codec === 'null' ? data : inflateRawAsync(data, { maxOutputLength: maxBytes });
}

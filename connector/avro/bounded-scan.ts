import type { Type } from 'avsc';
import { fail, ok, type DecodeProblemCode, type Result } from './problems.js';

/**
 * A bounds-checked walk over Avro binary data before avsc decodes it. avsc trusts lengths and
 * counts: a random varint can ask it for an array of 2^30 items and it will loop (or allocate) for
 * that long. Walking the writer schema first, with every length and count checked against the
 * bytes that remain, costs one linear pass and turns every bad payload into a problem with the
 * exact offset. Encoding rules: Avro specification, "Binary Encoding".
 */

export interface ScanLimits {
  /** Deepest nesting of records, arrays, maps and unions accepted (recursive schemas). @default 512 */
  readonly maxDepth?: number;
  /** Most items of zero-byte types (null, empty records) accepted in one value; they cost no bytes, so a
   *  corrupt count could otherwise be huge. @default 65536 */
  readonly maxZeroByteItems?: number;
}

/** Walks one value of `type` from `start`; returns the offset just past it. */
export function scanValue(type: Type, bytes: Uint8Array, start: number, limits: ScanLimits = {}): Result<number> {
  const scanner = new Scanner(bytes, start, limits.maxDepth ?? 512, limits.maxZeroByteItems ?? 65_536);
  try {
    scanner.value(type as AvroType, 0);
    return ok(scanner.pos);
  } catch (stop) {
    if (stop instanceof ScanStop) return fail(stop.code, stop.reason, { offset: stop.offset });
    throw stop;
  }
}

/** The avsc type properties the walk reads (avsc's own typings leave most of them out). */
interface AvroType {
  readonly typeName: string;
  readonly fields?: readonly { readonly name: string; readonly type: AvroType }[];
  readonly itemsType?: AvroType;
  readonly valuesType?: AvroType;
  readonly types?: readonly AvroType[];
  readonly symbols?: readonly string[];
  readonly size?: number;
  readonly underlyingType?: AvroType;
}

class ScanStop {
  constructor(
    readonly code: DecodeProblemCode,
    readonly reason: string,
    readonly offset: number,
  ) {}
}

const INT32_MIN = -(2 ** 31);
const INT32_MAX = 2 ** 31 - 1;

class Scanner {
  private zeroByteItems = 0;

  constructor(
    private readonly bytes: Uint8Array,
    public pos: number,
    private readonly maxDepth: number,
    private readonly maxZeroByteItems: number,
  ) {}

  value(type: AvroType, depth: number): void {
    switch (type.typeName) {
      case 'null':
        return;
      case 'boolean': {
        const at = this.pos;
        const byte = this.bytes[this.skip(1, 'boolean')]!;
        if (byte > 1) throw new ScanStop('malformed', `boolean byte is ${byte}; only 0 and 1 are valid`, at);
        return;
      }
      case 'int': {
        const at = this.pos;
        const value = this.long('int');
        if (value < INT32_MIN || value > INT32_MAX) throw new ScanStop('malformed', `int ${value} is outside 32 bits`, at);
        return;
      }
      case 'long':
        this.long('long');
        return;
      case 'float':
        this.skip(4, 'float');
        return;
      case 'double':
        this.skip(8, 'double');
        return;
      case 'bytes':
      case 'string':
        this.skip(this.length(type.typeName), type.typeName);
        return;
      case 'fixed':
        this.skip(type.size ?? 0, 'fixed');
        return;
      case 'enum': {
        const at = this.pos;
        const index = this.long('enum index');
        const count = type.symbols?.length ?? 0;
        if (index < 0 || index >= count) throw new ScanStop('malformed', `enum index ${index} is outside 0..${count - 1}`, at);
        return;
      }
      case 'record':
      case 'error':
        this.enter(depth);
        for (const field of type.fields ?? []) this.value(field.type, depth + 1);
        return;
      case 'array':
        this.enter(depth);
        this.blocks(type.itemsType!, false, depth + 1);
        return;
      case 'map':
        this.enter(depth);
        this.blocks(type.valuesType!, true, depth + 1);
        return;
      case 'union:unwrapped':
      case 'union:wrapped': {
        this.enter(depth);
        const at = this.pos;
        const branches = type.types ?? [];
        const index = this.long('union index');
        if (index < 0 || index >= branches.length) {
          throw new ScanStop('malformed', `union branch ${index} is outside 0..${branches.length - 1}`, at);
        }
        this.value(branches[index]!, depth + 1);
        return;
      }
      default:
        if (type.underlyingType !== undefined) return this.value(type.underlyingType, depth);
        throw new ScanStop('malformed', `schema type ${type.typeName} is not supported`, this.pos);
    }
  }

  /** Array and map blocks: a count (negative: followed by the block's byte size), items, then 0. */
  private blocks(itemType: AvroType, keyed: boolean, depth: number): void {
    const itemMinBytes = (keyed ? 1 : 0) + minimumBytesOf(itemType);
    for (;;) {
      const countAt = this.pos;
      let count = this.long('block count');
      if (count === 0) return;
      let declaredSize: number | undefined;
      if (count < 0) {
        count = -count;
        declaredSize = this.length('block');
      }
      const blockStart = this.pos;
      if (itemMinBytes === 0) {
        this.zeroByteItems += count;
        if (this.zeroByteItems > this.maxZeroByteItems) {
          throw new ScanStop('malformed', `block count ${count} of zero-byte items exceeds the limit ${this.maxZeroByteItems}`, countAt);
        }
      } else if (count > (this.bytes.length - this.pos) / itemMinBytes) {
        throw new ScanStop('truncated', `block count ${count} needs at least ${count * itemMinBytes} bytes, ${this.bytes.length - this.pos} remain`, countAt);
      }
      for (let i = 0; i < count; i++) {
        if (keyed) this.skip(this.length('map key'), 'map key');
        this.value(itemType, depth);
      }
      if (declaredSize !== undefined && this.pos - blockStart !== declaredSize) {
        throw new ScanStop('malformed', `block declares ${declaredSize} bytes but its items take ${this.pos - blockStart}`, blockStart);
      }
    }
  }

  private enter(depth: number): void {
    if (depth >= this.maxDepth) throw new ScanStop('malformed', `value nests deeper than ${this.maxDepth} levels`, this.pos);
  }

  /** A non-negative length (of a `what`); `skip` then checks it against the bytes that remain. */
  private length(what: string): number {
    const at = this.pos;
    const length = this.long(what, ' length');
    if (length < 0) throw new ScanStop('malformed', `${what} length is negative (${length})`, at);
    return length;
  }

  /** Moves past `count` bytes; returns where they start. Messages are built only on failure: this runs per field. */
  private skip(count: number, what: string): number {
    const start = this.pos;
    if (start + count > this.bytes.length) {
      throw new ScanStop('truncated', `${what} needs ${count} bytes, ${this.bytes.length - start} remain`, start);
    }
    this.pos = start + count;
    return start;
  }

  /** A zig-zag varint long; values beyond ±(2^53 − 1) are refused because avsc cannot hold them exactly. */
  private long(what: string, part = ''): number {
    const start = this.pos;
    let raw = 0;
    let scale = 1;
    for (let i = 0; ; i++) {
      if (this.pos >= this.bytes.length) throw new ScanStop('truncated', `${what}${part} varint runs past the end`, start);
      const byte = this.bytes[this.pos++]!;
      if (i === 9 && byte > 1) throw new ScanStop('malformed', `${what}${part} varint is longer than 64 bits`, start);
      raw += (byte & 0x7f) * scale;
      scale *= 128;
      if ((byte & 0x80) === 0) break;
    }
    if (raw <= Number.MAX_SAFE_INTEGER) return raw % 2 === 0 ? raw / 2 : -(raw + 1) / 2;
    // Above 2^53 the float sum lost the low bits; redo it exactly.
    const value = this.exactLong(start);
    if (value > BigInt(Number.MAX_SAFE_INTEGER) || value < BigInt(Number.MIN_SAFE_INTEGER)) {
      throw new ScanStop('malformed', `${what}${part} ${value} is beyond ±(2^53 − 1), which JavaScript numbers cannot hold exactly`, start);
    }
    return Number(value);
  }

  private exactLong(start: number): bigint {
    let raw = 0n;
    for (let i = start; i < this.pos; i++) raw |= BigInt(this.bytes[i]! & 0x7f) << BigInt(7 * (i - start));
    return (raw >> 1n) ^ -(raw & 1n);
  }
}

const minimumBytesCache = new WeakMap<AvroType, number>();

/** The fewest bytes one value of `type` can take: a lower bound used to reject impossible counts. */
export function minimumBytes(type: Type): number {
  return minimumBytesOf(type as AvroType);
}

function minimumBytesOf(type: AvroType, visiting: Set<AvroType> = new Set()): number {
  const cached = minimumBytesCache.get(type);
  if (cached !== undefined) return cached;
  // A type met again inside itself is a recursion; 0 keeps the bound a lower bound.
  if (visiting.has(type)) return 0;
  visiting.add(type);
  const bytes = ((): number => {
    switch (type.typeName) {
      case 'null':
        return 0;
      case 'float':
        return 4;
      case 'double':
        return 8;
      case 'fixed':
        return type.size ?? 0;
      case 'record':
      case 'error':
        return (type.fields ?? []).reduce((sum, field) => sum + minimumBytesOf(field.type, visiting), 0);
      default:
        return type.underlyingType !== undefined ? minimumBytesOf(type.underlyingType, visiting) : 1;
    }
  })();
  visiting.delete(type);
  if (visiting.size === 0) minimumBytesCache.set(type, bytes);
  return bytes;
}

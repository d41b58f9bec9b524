import type { FreshKind } from './field-plan.js';

/** A uniform random number in [0, 1), e.g. from a seeded PRNG; the codec never seeds or owns one. */
export type UniformRandom = () => number;

const UUID_PATTERN = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
const DIGITS = '0123456789';
const LOWER = 'abcdefghijklmnopqrstuvwxyz';
const UPPER = 'ABCDEFGHIJKLMNOPQRSTUVWXYZ';
const HEX = '0123456789abcdef';
/** Length of a new id when the source value gives no shape to follow. */
const SHAPELESS_ID_LENGTH = 16;

function pick(alphabet: string, random: UniformRandom): string {
  return alphabet[Math.floor(random() * alphabet.length) % alphabet.length]!;
}

function randomBytes(length: number, random: UniformRandom): Buffer {
  const bytes = Buffer.alloc(length);
  for (let i = 0; i < length; i++) bytes[i] = Math.floor(random() * 256) & 0xff;
  return bytes;
}

/** A version-4 UUID (RFC 4122 §4.4 layout: version nibble 4, variant bits 10). */
export function freshUuid(random: UniformRandom): string {
  let text = '';
  for (let i = 0; i < 32; i++) {
    let digit = pick(HEX, random);
    if (i === 12) digit = '4';
    if (i === 16) digit = HEX[8 + (Number.parseInt(digit, 16) & 3)]!;
    text += digit;
    if (i === 7 || i === 11 || i === 15 || i === 19) text += '-';
  }
  return text;
}

/**
 * A new id shaped like the source: digits become random digits and letters random letters of the same
 * case; other characters stay, and so does a leading prefix of letters and punctuation before the first
 * digit (`ORD-2024-00017` becomes e.g. `ORD-8301-55920`, `IMO9312345` becomes `IMO4417020`).
 * A source uuid gives a new uuid; a source without digits or letters gives 16 random ones.
 */
export function freshIdLike(source: string, random: UniformRandom): string {
  if (UUID_PATTERN.test(source)) return freshUuid(random);
  const firstDigit = source.search(/[0-9]/);
  const prefixLength = firstDigit > 0 ? firstDigit : 0;
  let text = source.slice(0, prefixLength);
  let replaced = 0;
  for (const character of source.slice(prefixLength)) {
    if (DIGITS.includes(character)) text += pick(DIGITS, random);
    else if (LOWER.includes(character)) text += pick(LOWER, random);
    else if (UPPER.includes(character)) text += pick(UPPER, random);
    else {
      text += character;
      continue;
    }
    replaced++;
  }
  if (replaced > 0) return text;
  let shapeless = '';
  for (let i = 0; i < SHAPELESS_ID_LENGTH; i++) shapeless += pick(LOWER + DIGITS, random);
  return shapeless;
}

/**
 * A new value for a `fresh` field. Numbers are uniform non-negative integers (int: below 2^31;
 * long: below 2^52, so they stay exact JavaScript numbers); bytes keep the source's length.
 */
export function freshValue(kind: FreshKind, source: unknown, random: UniformRandom, size = 0): unknown {
  switch (kind) {
    case 'uuid':
      return freshUuid(random);
    case 'string':
      return freshIdLike(typeof source === 'string' ? source : '', random);
    case 'int':
      return Math.floor(random() * 2 ** 31) % 2 ** 31;
    case 'long':
      return (Math.floor(random() * 2 ** 26) % 2 ** 26) * 2 ** 26 + (Math.floor(random() * 2 ** 26) % 2 ** 26);
    case 'bytes':
      return randomBytes(Buffer.isBuffer(source) && source.length > 0 ? source.length : SHAPELESS_ID_LENGTH, random);
    case 'fixed':
      return randomBytes(size, random);
  }
}

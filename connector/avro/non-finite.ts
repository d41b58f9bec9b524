/**
 * Finds a NaN or ±Infinity in a decoded value. Avro float and double may carry them, but the feature
 * codec and the model cannot learn from them, so the decoder reports the record instead.
 * Walks the decoded value itself (records, arrays, maps, wrapped unions), so it needs no schema:
 * only float and double decode to non-finite numbers.
 */
export function findNonFinite(value: unknown, path = ''): { path: string; value: number } | undefined {
  if (typeof value === 'number') return Number.isFinite(value) ? undefined : { path: path || '(value)', value };
  if (value === null || typeof value !== 'object' || ArrayBuffer.isView(value) || value instanceof Date) return undefined;
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) {
      const found = findNonFinite(value[i], `${path}[${i}]`);
      if (found !== undefined) return found;
    }
    return undefined;
  }
  const object = value as Record<string, unknown>;
  for (const key of Object.keys(object)) {
    const item = object[key];
    // Only numbers and containers can hold a non-finite number; skip the rest before building a path.
    if (item === null || (typeof item !== 'number' && typeof item !== 'object')) continue;
    const found = findNonFinite(item, path === '' ? key : `${path}.${key}`);
    if (found !== undefined) return found;
  }
  return undefined;
}

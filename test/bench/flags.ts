/** A command-line count for a benchmark: a whole number ≥ 1, else an error naming the flag. */
export function positiveInteger(name: string, text: string | undefined): number {
  const value = Number(text);
  if (!Number.isInteger(value) || value < 1) throw new Error(`${name} must be a positive integer, got \`${text}\``);
  return value;
}

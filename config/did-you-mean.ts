/**
 * Suggests the allowed name closest to a mistyped one, by Levenshtein edit distance ignoring case.
 * A suggestion is offered only when it is close: at most a third of the name's length (and at least 2)
 * edits away — a common-practice threshold that catches typos without proposing unrelated keys.
 */
export function didYouMean(input: string, candidates: readonly string[]): string | undefined {
  const wanted = input.toLowerCase();
  const limit = Math.max(2, Math.floor(wanted.length / 3));
  let best: string | undefined;
  let bestDistance = Number.POSITIVE_INFINITY;
  for (const candidate of candidates) {
    const distance = editDistance(wanted, candidate.toLowerCase());
    if (distance < bestDistance) {
      best = candidate;
      bestDistance = distance;
    }
  }
  return bestDistance <= limit ? best : undefined;
}

/** Levenshtein distance: fewest single-character insertions, deletions or substitutions from a to b. */
export function editDistance(a: string, b: string): number {
  let previous = Array.from({ length: b.length + 1 }, (_, index) => index);
  for (let i = 1; i <= a.length; i += 1) {
    const current = [i];
    for (let j = 1; j <= b.length; j += 1) {
      const substitution = (previous[j - 1] ?? 0) + (a[i - 1] === b[j - 1] ? 0 : 1);
      current.push(Math.min((previous[j] ?? 0) + 1, (current[j - 1] ?? 0) + 1, substitution));
    }
    previous = current;
  }
  return previous[b.length] ?? 0;
}

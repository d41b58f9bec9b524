import type { TopicPartition } from './topic-partition.js';

/**
 * The balance counts of one source partition as they are persisted (one record per partition in a
 * compacted state topic, written with the offsets; in a replay summary; on revoke). In half-life mode the
 * numbers are the decayed counts at the moment of the snapshot, so they are fractional.
 */
export interface PartitionBalanceState extends TopicPartition {
  /** Layout version of this record; bumped on any incompatible change. */
  readonly version: 1;
  /** Originals seen per class, every class (target or not): the non-target ones make up M. */
  readonly originals: Readonly<Record<string, number>>;
  /** Synthetic records emitted per target class (after thinning). */
  readonly synthetic: Readonly<Record<string, number>>;
  /** Records of each target class whose k was lowered by the per-record cap (decayed like the rest). */
  readonly capped: Readonly<Record<string, number>>;
}

export interface BalanceStateProblem {
  readonly code: 'bad-balance-state';
  /** What is wrong, naming the field and the value. */
  readonly reason: string;
}

export type BalanceStateResult =
  | { readonly ok: true; readonly value: PartitionBalanceState }
  | { readonly ok: false; readonly problem: BalanceStateProblem };

const COUNT_FIELDS = ['originals', 'synthetic', 'capped'] as const;

/**
 * JSON text of the state with keys in a fixed order, so equal states give equal bytes (a compacted topic
 * then sees identical values). JSON numbers round-trip JS doubles exactly (ECMA-262 Number::toString
 * prints the shortest text that reads back as the same double).
 */
export function encodeBalanceState(state: PartitionBalanceState): string {
  const sorted = (counts: Readonly<Record<string, number>>) =>
    Object.fromEntries(Object.keys(counts).sort().map((label) => [label, counts[label]]));
  return JSON.stringify({
    version: state.version,
    topic: state.topic,
    partition: state.partition,
    originals: sorted(state.originals),
    synthetic: sorted(state.synthetic),
    capped: sorted(state.capped),
  });
}

/** Reads state written by `encodeBalanceState`; a problem value (never a throw) for anything else. */
export function decodeBalanceState(text: string): BalanceStateResult {
  let parsed: unknown;
  try {
    parsed = JSON.parse(text);
  } catch (error) {
    return fail(`not JSON (${(error as Error).message})`);
  }
  if (!isObject(parsed)) return fail(`expected a JSON object, got ${describe(parsed)}`);
  if (parsed.version !== 1) return fail(`field version: expected 1, got ${describe(parsed.version)}`);
  if (typeof parsed.topic !== 'string' || parsed.topic === '') {
    return fail(`field topic: expected a non-empty string, got ${describe(parsed.topic)}`);
  }
  const partition = parsed.partition;
  if (typeof partition !== 'number' || !Number.isInteger(partition) || partition < 0) {
    return fail(`field partition: expected a non-negative integer, got ${describe(partition)}`);
  }
  const counts: Partial<Record<(typeof COUNT_FIELDS)[number], Record<string, number>>> = {};
  for (const field of COUNT_FIELDS) {
    const value = parsed[field];
    if (!isObject(value)) return fail(`field ${field}: expected an object of counts per class, got ${describe(value)}`);
    for (const [label, count] of Object.entries(value)) {
      if (typeof count !== 'number' || !Number.isFinite(count) || count < 0) {
        return fail(`field ${field}.${label}: expected a finite count ≥ 0, got ${describe(count)}`);
      }
    }
    counts[field] = value as Record<string, number>;
  }
  return {
    ok: true,
    value: {
      version: 1,
      topic: parsed.topic,
      partition,
      originals: counts.originals!,
      synthetic: counts.synthetic!,
      capped: counts.capped!,
    },
  };
}

function fail(reason: string): BalanceStateResult {
  return { ok: false, problem: { code: 'bad-balance-state', reason } };
}

function isObject(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

function describe(value: unknown): string {
  const text = JSON.stringify(value) ?? String(value);
  return text.length > 60 ? `${text.slice(0, 57)}...` : text;
}

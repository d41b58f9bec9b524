/**
 * A stream whose synthetic output is known in advance, so a fault scenario can count what is missing
 * and what is repeated without running the planner: every rare record gets exactly the per-record cap
 * of variants. (The at-least-once kill test, test/integration/run-at-least-once-kill.test.ts, uses the
 * same construction.) Which of those variants survive the model's schema check, model/synthesize says.
 *
 * How: targets far above what k ≤ cap can reach keep every class's deficit above the cap all the way,
 * once each partition has some common records counted first (a lead of common records at the start),
 * whatever counts a restart or a rebalance resumes from; the privacy guard is off so no variant is
 * dropped as too close to its source.
 */
import { loadConfigFile } from '../../config/load.js';
import { requireSections } from '../../config/requirements.js';
import { synthesize } from '../../model/synthesize.js';
import { loadTrainedModel } from '../../model/trained-model.js';
import { sorterEvents, variantKey, type SorterEvent, type TaggedMessage, type WrittenEvent } from '../support/run-worker-scenario.js';

/** `balance.maxPerRecord` of the scenario configs (writeRunConfig). */
export const PER_RECORD_CAP = 5;

/** Targets no partition can reach with k ≤ 5 from 2 % + 2 % rare records. */
export const UNREACHABLE_TARGETS = { jam: 0.2, misroute: 0.2 } as const;

/** Leading positions kept free of rare records, so each partition's balance has common counts first. */
const COMMON_LEAD = 300;

/** `count` sorter events (2 % jam, 2 % misroute) after a common lead; see the module comment. */
export function cappedPlanEvents(count: number, seed: number): SorterEvent[] {
  return sorterEvents(count + COMMON_LEAD, { jam: 0.02, misroute: 0.02 }, seed)
    .filter((event, position) => position >= COMMON_LEAD || event.outcome === 'ok')
    .slice(0, count);
}

export function isRare(entry: WrittenEvent): boolean {
  return entry.event?.outcome === 'jam' || entry.event?.outcome === 'misroute';
}

/**
 * `topic:partition:offset:sample` of every variant the worker must write under the capped plan: the
 * `PER_RECORD_CAP` sample indices of each rare record, less any decode the model's own schema check
 * drops (rare, but the worker counts them as skipped, not written). Decodes are fixed by the model, the
 * seed and the record's place, so model/synthesize, given the worker's config, tells which those are.
 */
export async function plannedVariantKeys(configPath: string, sourceTopic: string, written: readonly WrittenEvent[]): Promise<Set<string>> {
  const config = requireSections(await loadConfigFile(configPath), 'reliability', ['balance', 'model']);
  const rare = written.filter(isRare);
  const model = await loadTrainedModel(config.model.dir);
  try {
    const result = synthesize(
      model,
      rare.map((entry) => ({ record: entry.event as never, className: entry.event!.outcome!, key: { topic: sourceTopic, partition: entry.partition, offset: entry.offset }, k: PER_RECORD_CAP })),
      { temperature: config.balance.temperature, seed: config.balance.seed, privacyGuard: config.model.privacyGuard },
    );
    return new Set(result.records.map(({ sourceIndex, sampleIndex }) => `${sourceTopic}:${rare[sourceIndex]!.partition}:${rare[sourceIndex]!.offset}:${sampleIndex}`));
  } finally {
    model.dispose();
  }
}

export interface VariantTally {
  readonly expected: number;
  /** Output records read. */
  readonly records: number;
  /** Distinct expected variants seen. */
  readonly present: number;
  /** Output records beyond the first of their variant. */
  readonly duplicates: number;
  readonly missing: number;
  /** Output records that are no expected variant (an original, or a variant of no plan). */
  readonly unexpected: number;
  /** A few missing keys, for the failure line. */
  readonly missingExamples: readonly string[];
}

export function tallyVariants(expected: ReadonlySet<string>, output: readonly TaggedMessage[]): VariantTally {
  const seen = new Map<string, number>();
  let unexpected = 0;
  for (const { tag } of output) {
    const key = variantKey(tag);
    if (tag.kind !== 'synthetic' || !expected.has(key)) unexpected += 1;
    else seen.set(key, (seen.get(key) ?? 0) + 1);
  }
  const missing = [...expected].filter((key) => !seen.has(key));
  let duplicates = 0;
  for (const times of seen.values()) duplicates += times - 1;
  return { expected: expected.size, records: output.length, present: seen.size, duplicates, missing: missing.length, unexpected, missingExamples: missing.slice(0, 3) };
}

/** Output records beyond the first of their variant key, whatever the plan was. */
export function duplicateCount(output: readonly TaggedMessage[]): number {
  return output.length - new Set(output.map(({ tag }) => variantKey(tag))).size;
}

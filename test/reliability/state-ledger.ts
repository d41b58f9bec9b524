/**
 * The balance counts a group left in its compacted state topic, set against what is on the topics: per
 * source partition and class, the originals counted must equal the source records of that class, and
 * the synthetic records counted must equal the committed output records of that class made from that
 * partition. Lost counts (a handover that restored nothing) or counts of outputs that were never
 * committed (or committed twice) show up as a mismatch.
 */
import { defaultStateTopic } from '../../connector/kafka/client-settings.js';
import { loadBalanceStates } from '../../connector/kafka/state-topic.js';
import { sorterSchema, type SorterEvent, type TaggedMessage, type WrittenEvent } from '../support/run-worker-scenario.js';

export interface LedgerComparison {
  /** One line per (partition, class, count) that disagrees. */
  readonly mismatches: readonly string[];
  /** Sums over partitions, per class, of what the state says. */
  readonly stateOriginals: Readonly<Record<string, number>>;
  readonly stateSynthetic: Readonly<Record<string, number>>;
}

export async function compareStateWithTopics(options: {
  readonly brokers: string;
  readonly group: string;
  readonly sourceTopic: string;
  readonly partitions: number;
  readonly written: readonly WrittenEvent[];
  /** The committed output (read_committed), synthetic records only. */
  readonly synthetic: readonly TaggedMessage[];
}): Promise<LedgerComparison> {
  const partitions = Array.from({ length: options.partitions }, (_, partition) => ({ topic: options.sourceTopic, partition }));
  const states = await loadBalanceStates({ kafka: { brokers: options.brokers, settings: {} }, stateTopic: defaultStateTopic(options.group), partitions });
  const mismatches: string[] = [];
  const stateOriginals: Record<string, number> = {};
  const stateSynthetic: Record<string, number> = {};
  for (const [partition, state] of states.entries()) {
    if (state === undefined) {
      mismatches.push(`partition ${partition}: no balance state`);
      continue;
    }
    const sourceCounts = countBy(options.written.filter((entry) => entry.partition === partition && entry.event?.outcome != null), (entry) => entry.event!.outcome!);
    const outputCounts = countBy(options.synthetic.filter((entry) => entry.tag.source.partition === partition), (entry) => (sorterSchema.type.fromBuffer(entry.message.value!) as SorterEvent).outcome ?? 'null');
    compareCounts(`partition ${partition} originals`, state.originals, sourceCounts, mismatches);
    compareCounts(`partition ${partition} synthetic`, state.synthetic, outputCounts, mismatches);
    addInto(stateOriginals, state.originals);
    addInto(stateSynthetic, state.synthetic);
  }
  return { mismatches, stateOriginals, stateSynthetic };
}

function countBy<T>(items: readonly T[], key: (item: T) => string): Record<string, number> {
  const counts: Record<string, number> = {};
  for (const item of items) counts[key(item)] = (counts[key(item)] ?? 0) + 1;
  return counts;
}

function compareCounts(what: string, state: Readonly<Record<string, number>>, actual: Readonly<Record<string, number>>, mismatches: string[]): void {
  for (const label of new Set([...Object.keys(state), ...Object.keys(actual)])) {
    const counted = state[label] ?? 0;
    const found = actual[label] ?? 0;
    if (counted !== found) mismatches.push(`${what} of ${label}: state ${counted}, topics ${found}`);
  }
}

function addInto(total: Record<string, number>, counts: Readonly<Record<string, number>>): void {
  for (const [label, count] of Object.entries(counts)) total[label] = (total[label] ?? 0) + count;
}

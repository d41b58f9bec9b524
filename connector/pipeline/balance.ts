/**
 * The balance controller: decides for each rare-class record how many synthetic variants (k) to make so
 * each target class reaches its share of the combined output stream (originals + synthetic).
 *
 * Semantics (../shared/DESIGN.md, "Balance target"): for target class c with target share t_c,
 *   M   = originals of non-target classes seen,   T = Σ t_c over target classes,
 *   desired_c = t_c·M/(1−T),   d_c = desired_c − n_c − s_c
 * (n_c originals of c, s_c synthetic of c emitted), and a record of class c gets
 *   k = min(maxPerRecord, stochasticRound(max(d_c, 0))).
 * Classes not named in the targets always get k = 0. Counts are updated record by record, the record itself
 * first, so the deficit reacts within a batch.
 *
 * Counting. `cumulative`: counts grow for ever. `half-life` with h records: every source record planned
 * (any class, any owned partition) first multiplies ALL owned counts (originals, synthetic, capped) by
 * 2^(−1/h), then adds itself with weight 1; its synthetic records are added with weight 1 too. So a count
 * halves every h records of the controller's combined stream. The decay is applied lazily: counts are kept
 * in units inflated by 2^(ticks/h) and brought back to plain units ("rebased") on every snapshot, assign,
 * revoke and every 64·h records.
 * Choose h much larger than the number of records between two rare records: the deficit is read at rare
 * records, just when their decayed synthetic count peaks, so the long-run share falls short by about
 * g·ln2/h of its synthetic part for g records between rare records (measured in the unit tests' setting:
 * h = 3,000, 1 % rare, target 10 % → 9.8 %), and deficit deferred by the cap decays away unmade.
 *
 * Partitions. Counts are kept and persisted per source partition; the controller sums the partitions it
 * currently owns (in topic, partition order). Consequences: with several workers in one consumer group
 * each balances the partitions it owns, so the whole output is balanced only as the sum of balanced parts
 * (fine while partitions carry similar mixes); a rebalance moves a partition's counts with it; in
 * half-life mode a partition's counts do not decay while no worker owns it.
 *
 * Exact continuation: a snapshot rebases, so a controller restored from snapshots taken at a batch boundary
 * (with the same random source state) plans exactly what the original would have planned, bit for bit.
 */
import { RaretideError, UsageError } from '../../config/errors.js';
import type { PartitionBalanceState } from './balance-state.js';
import { comparePartitions, describePartition, partitionKey, type TopicPartition } from './topic-partition.js';

/**
 * A source of uniform numbers in [0, 1); a seeded generator so replays repeat. It is told which record
 * the draw is for, so a keyed source can make each record's draw depend on that record alone (and not
 * on how partitions interleave); a plain stream may ignore it.
 */
export interface UniformSource {
  uniform(record: BalanceRecord): number;
}

/** How counts accumulate (the same shape as the `balance.counting` config section). */
export type CountingOptions =
  | { readonly mode: 'cumulative' }
  | { readonly mode: 'half-life'; readonly halfLifeRecords: number };

/** The controller's settings (structurally the `balance` config section). */
export interface BalanceOptions {
  /** Target share of the combined stream per rare class; each in (0, 1), summing to less than 1. */
  readonly targets: Readonly<Record<string, number>>;
  /** Most synthetic records made from one rare record (a positive integer). */
  readonly maxPerRecord: number;
  readonly counting: CountingOptions;
}

/** One source record as the planner sees it: where it came from and its class. */
export interface BalanceRecord extends TopicPartition {
  readonly label: string;
  /** Where the record sits in its partition, when known; a keyed `UniformSource` draws by it. */
  readonly offset?: bigint;
}

/** The decision for one record. */
export interface RecordPlan {
  /** Synthetic records to make from this record (after thinning). */
  readonly k: number;
  /** Synthetic records the balance wanted but the grant (rate cap) refused. */
  readonly thinned: number;
}

/**
 * Called for each record that wants k > 0, before counting; returns how many it may make (0…wanted).
 * This is where the rate cap's `thin` policy plugs in, so the counts see only what is really made.
 */
export type GrantSynthetic = (wanted: number, record: BalanceRecord) => number;

export type ShareStatus = 'untargeted' | 'met' | 'short' | 'over';

/** One class in the metrics and the summary (decayed counts in half-life mode). */
export interface ClassShare {
  readonly label: string;
  readonly originals: number;
  readonly synthetic: number;
  /** (originals + synthetic) of this class over all originals and synthetic; 0 before any record. */
  readonly share: number;
  /** The target share, or undefined for a class that is not oversampled. */
  readonly target: number | undefined;
  readonly status: ShareStatus;
  /** Fraction of this class's originals whose k was lowered by the per-record cap. */
  readonly cappedFraction: number;
  /** Why a target class is off target, with the fix where there is one. */
  readonly note: string | undefined;
}

interface PartitionCounts {
  readonly id: TopicPartition;
  readonly originals: Map<string, number>;
  readonly synthetic: Map<string, number>;
  readonly capped: Map<string, number>;
  /** Σ originals of non-target classes; kept to avoid a sum over classes per record. */
  nonTargetOriginals: number;
}

const NOTHING: RecordPlan = Object.freeze({ k: 0, thinned: 0 });
/** Inflation stays below 2^64 before a rebase, far from double overflow and with full precision. */
const REBASE_AFTER_HALF_LIVES = 64;

export class BalanceController {
  private readonly targets: ReadonlyMap<string, number>;
  private readonly targetTotal: number;
  private readonly maxPerRecord: number;
  /** h in records; Infinity in cumulative mode, where every weight is then exactly 2^0 = 1. */
  private readonly halfLife: number;
  private readonly byKey = new Map<string, PartitionCounts>();
  private ordered: PartitionCounts[] = [];
  /** Records planned since the last rebase; a new count weighs 2^(ticks/h) in stored units. */
  private ticks = 0;

  constructor(
    options: BalanceOptions,
    private readonly random: UniformSource,
  ) {
    validateOptions(options);
    this.targets = new Map(Object.entries(options.targets));
    this.targetTotal = Object.values(options.targets).reduce((sum, share) => sum + share, 0);
    this.maxPerRecord = options.maxPerRecord;
    this.halfLife = options.counting.mode === 'half-life' ? options.counting.halfLifeRecords : Infinity;
  }

  /** Takes ownership of a partition, with its persisted counts or from zero. */
  assign(partition: TopicPartition, state?: PartitionBalanceState): void {
    const key = partitionKey(partition);
    if (this.byKey.has(key)) {
      throw new RaretideError('balance.already-assigned', `Balance counts for ${describePartition(partition)} are already assigned; revoke it first.`);
    }
    if (state !== undefined && partitionKey(state) !== key) {
      throw new RaretideError(
        'balance.state-mismatch',
        `Balance state for ${describePartition(state)} was given for ${describePartition(partition)}; pass the state stored for that partition.`,
      );
    }
    this.rebase();
    const counts: PartitionCounts = {
      id: { topic: partition.topic, partition: partition.partition },
      originals: new Map(Object.entries(state?.originals ?? {})),
      synthetic: new Map(Object.entries(state?.synthetic ?? {})),
      capped: new Map(Object.entries(state?.capped ?? {})),
      nonTargetOriginals: 0,
    };
    counts.nonTargetOriginals = this.sumNonTargetOriginals(counts);
    this.byKey.set(key, counts);
    this.ordered = [...this.ordered, counts].sort((a, b) => comparePartitions(a.id, b.id));
  }

  /** Gives up a partition and returns its final counts, to persist. */
  revoke(partition: TopicPartition): PartitionBalanceState {
    const [state] = this.snapshot([partition]);
    this.byKey.delete(partitionKey(partition));
    this.ordered = this.ordered.filter((counts) => partitionKey(counts.id) !== partitionKey(partition));
    return state!;
  }

  /** The partitions whose counts this controller holds, in summing order. */
  owned(): TopicPartition[] {
    return this.ordered.map((counts) => counts.id);
  }

  /**
   * Plans a batch: for each record in order, counts it, then (target classes only) computes its deficit
   * and k. Every record's partition must be assigned; the batch is checked before anything is counted.
   */
  planBatch(records: readonly BalanceRecord[], grant?: GrantSynthetic): RecordPlan[] {
    // All counts are looked up first, so an unassigned partition fails the batch before anything is counted.
    // Batches come in runs of one partition: the counts are looked up once per run.
    const entries = new Array<PartitionCounts>(records.length);
    for (let index = 0; index < records.length; index++) {
      const record = records[index]!;
      const previous = records[index - 1];
      entries[index] = previous !== undefined && previous.partition === record.partition && previous.topic === record.topic ? entries[index - 1]! : this.countsFor(record);
    }
    const plans = new Array<RecordPlan>(records.length);
    for (let index = 0; index < records.length; index++) {
      const record = records[index]!;
      const counts = entries[index]!;
      this.ticks += 1;
      const weight = 2 ** (this.ticks / this.halfLife);
      add(counts.originals, record.label, weight);
      const target = this.targets.get(record.label);
      if (target === undefined) {
        counts.nonTargetOriginals += weight;
        plans[index] = NOTHING;
      } else {
        plans[index] = this.planTargetRecord(record, counts, target, weight, grant);
      }
      if (this.ticks >= REBASE_AFTER_HALF_LIVES * this.halfLife) this.rebase();
    }
    return plans;
  }

  /**
   * Takes back synthetic records that were planned but not emitted (e.g. a sample the guard rejected).
   * In half-life mode they are removed at the current weight, i.e. as if made now: at most a factor
   * 2^(Δ/h) too much for Δ records since planning, negligible within a batch. Never goes below zero.
   */
  recordShortfall(record: BalanceRecord, count: number): void {
    if (!Number.isInteger(count) || count < 0) {
      throw new RaretideError('balance.bad-shortfall', `A shortfall must be a whole number ≥ 0, got ${count}.`);
    }
    const counts = this.countsFor(record);
    const weight = 2 ** (this.ticks / this.halfLife);
    counts.synthetic.set(record.label, Math.max(0, (counts.synthetic.get(record.label) ?? 0) - count * weight));
  }

  /**
   * The counts of the given partitions (default: all owned) in plain units, to persist with the offsets.
   * Rebases first, which is what makes a restore continue bit for bit.
   */
  snapshot(partitions: readonly TopicPartition[] = this.owned()): PartitionBalanceState[] {
    this.rebase();
    return partitions.map((partition) => {
      const counts = this.countsFor(partition);
      return {
        version: 1,
        topic: counts.id.topic,
        partition: counts.id.partition,
        originals: Object.fromEntries(counts.originals),
        synthetic: Object.fromEntries(counts.synthetic),
        capped: Object.fromEntries(counts.capped),
      };
    });
  }

  /**
   * Per class, over the owned partitions: counts, share of the combined stream and how it compares with
   * the target. `tolerance` is the half-width of the band counted as met (0.005 = ±0.5 percentage points).
   */
  shares(tolerance = 0.005): ClassShare[] {
    const scale = 2 ** (-this.ticks / this.halfLife);
    const originals = new Map<string, number>();
    const synthetic = new Map<string, number>();
    const capped = new Map<string, number>();
    for (const counts of this.ordered) {
      for (const [label, value] of counts.originals) add(originals, label, value * scale);
      for (const [label, value] of counts.synthetic) add(synthetic, label, value * scale);
      for (const [label, value] of counts.capped) add(capped, label, value * scale);
    }
    let total = 0;
    for (const value of originals.values()) total += value;
    for (const value of synthetic.values()) total += value;
    const labels = [...new Set([...originals.keys(), ...synthetic.keys(), ...this.targets.keys()])].sort();
    return labels.map((label) => {
      const n = originals.get(label) ?? 0;
      const s = synthetic.get(label) ?? 0;
      const share = total > 0 ? (n + s) / total : 0;
      const target = this.targets.get(label);
      const cappedFraction = n > 0 ? (capped.get(label) ?? 0) / n : 0;
      const status: ShareStatus =
        target === undefined ? 'untargeted' : share < target - tolerance ? 'short' : share > target + tolerance ? 'over' : 'met';
      const note = this.explain(status, target, n, total, cappedFraction);
      return { label, originals: n, synthetic: s, share, target, status, cappedFraction, note };
    });
  }

  private planTargetRecord(
    record: BalanceRecord,
    counts: PartitionCounts,
    target: number,
    weight: number,
    grant: GrantSynthetic | undefined,
  ): RecordPlan {
    const deficit = this.deficit(record.label, target);
    let wanted: number;
    if (deficit <= 0) {
      wanted = 0;
    } else if (deficit >= this.maxPerRecord) {
      wanted = this.maxPerRecord;
      if (deficit > this.maxPerRecord) add(counts.capped, record.label, weight);
    } else {
      wanted = this.stochasticRound(deficit, record);
    }
    if (wanted === 0) return NOTHING;
    const granted = grant === undefined ? wanted : checkGrant(grant(wanted, record), wanted);
    add(counts.synthetic, record.label, granted * weight);
    return { k: granted, thinned: wanted - granted };
  }

  /** d_c in plain units, summed over the owned partitions in their fixed order. */
  private deficit(label: string, target: number): number {
    let nonTarget = 0;
    let originals = 0;
    let synthetic = 0;
    for (const counts of this.ordered) {
      nonTarget += counts.nonTargetOriginals;
      originals += counts.originals.get(label) ?? 0;
      synthetic += counts.synthetic.get(label) ?? 0;
    }
    const desired = (target * nonTarget) / (1 - this.targetTotal);
    return 2 ** (-this.ticks / this.halfLife) * (desired - originals - synthetic);
  }

  /** floor(x) or floor(x)+1 with probability frac(x), so E[k] = x; draws only when the fraction is > 0. */
  private stochasticRound(value: number, record: BalanceRecord): number {
    const whole = Math.floor(value);
    const fraction = value - whole;
    if (fraction === 0) return whole;
    const draw = this.random.uniform(record);
    if (!(draw >= 0 && draw < 1)) {
      throw new RaretideError('balance.bad-random', `The random source returned ${draw}; expected a number in [0, 1).`);
    }
    return draw < fraction ? whole + 1 : whole;
  }

  /** Brings stored counts to plain units; the non-target sums are recomputed in label order. */
  private rebase(): void {
    if (this.ticks === 0) return;
    const scale = 2 ** (-this.ticks / this.halfLife);
    for (const counts of this.ordered) {
      for (const map of [counts.originals, counts.synthetic, counts.capped]) {
        for (const [label, value] of map) map.set(label, value * scale);
      }
      counts.nonTargetOriginals = this.sumNonTargetOriginals(counts);
    }
    this.ticks = 0;
  }

  private sumNonTargetOriginals(counts: PartitionCounts): number {
    let sum = 0;
    for (const label of [...counts.originals.keys()].sort()) {
      if (!this.targets.has(label)) sum += counts.originals.get(label)!;
    }
    return sum;
  }

  private countsFor(partition: TopicPartition): PartitionCounts {
    const counts = this.byKey.get(partitionKey(partition));
    if (counts === undefined) {
      throw new RaretideError(
        'balance.unassigned-partition',
        `No balance counts are assigned for ${describePartition(partition)}; call assign() with its stored state (or none, to start from zero) when the partition is assigned.`,
      );
    }
    return counts;
  }

  private explain(status: ShareStatus, target: number | undefined, originals: number, total: number, cappedFraction: number): string | undefined {
    if (target === undefined || status === 'met') return undefined;
    if (status === 'over') {
      return originals / total > target
        ? `its originals alone are ${percent(originals / total)} of the stream, above the target ${percent(target)}; synthetic records cannot lower a share`
        : `above the target ${percent(target)}; the deficit rounding has not evened out yet`;
    }
    if (originals === 0) return `no originals of this class seen yet, so nothing to make variants of`;
    if (cappedFraction > 0) {
      return `below the target ${percent(target)}: the per-record cap of ${this.maxPerRecord} lowered k for ${percent(cappedFraction)} of its records; raise balance.maxPerRecord to reach the target`;
    }
    return `below the target ${percent(target)}; the deficit is still being worked off`;
  }
}

function validateOptions(options: BalanceOptions): void {
  let total = 0;
  for (const [label, share] of Object.entries(options.targets)) {
    if (!(Number.isFinite(share) && share > 0 && share < 1)) {
      throw new UsageError(`balance.targets.${label} must be a share between 0 and 1 (exclusive), got ${share}.`);
    }
    total += share;
  }
  if (total >= 1) {
    throw new UsageError(`balance.targets sum to ${total}; they must sum to less than 1 (the rest is the other classes) — lower some targets.`);
  }
  if (!Number.isInteger(options.maxPerRecord) || options.maxPerRecord < 1) {
    throw new UsageError(`balance.maxPerRecord must be a whole number ≥ 1, got ${options.maxPerRecord}.`);
  }
  if (options.counting.mode === 'half-life') {
    const halfLife = options.counting.halfLifeRecords;
    if (!(Number.isFinite(halfLife) && halfLife > 0)) {
      throw new UsageError(`balance.counting.halfLifeRecords must be a number of records > 0, got ${halfLife}.`);
    }
  }
}

function checkGrant(granted: number, wanted: number): number {
  if (!Number.isInteger(granted) || granted < 0 || granted > wanted) {
    throw new RaretideError('balance.bad-grant', `The grant for ${wanted} synthetic records returned ${granted}; expected a whole number from 0 to ${wanted}.`);
  }
  return granted;
}

function add(map: Map<string, number>, label: string, amount: number): void {
  map.set(label, (map.get(label) ?? 0) + amount);
}

function percent(fraction: number): string {
  return `${(fraction * 100).toFixed(2)} %`;
}

/**
 * The live source of `run`: a KafkaConsumer in a consumer group, read with node-rdkafka's batch API
 * `consume(n)` (never flowing mode, which has no back-pressure and crashed on disconnect:
 * NODE-RDKAFKA.md, "Consumption").
 *
 * Rebalances (cooperative-sticky) go through our own rebalance callback, which always ends in
 * incrementalAssign / incrementalUnassign — librdkafka waits for that, and a close would hang without it.
 * New partitions are announced to the AssignmentListener (the core loads their balance state) before
 * they are assigned, so no record arrives ahead of its state; revoked ones are announced before they are
 * unassigned (the core checkpoints first), and records of partitions being revoked are held back.
 *
 * Offsets are committed only through the sink's checkpoints (this class is the sink's ConsumerGroupLink);
 * nothing is committed automatically or from the local offset store.
 *
 * Read-ahead: once a batch is handed out, the next `consume(n)` is started at once, so librdkafka's side
 * of it (run on libuv's thread pool) overlaps the caller's work on the batch; turning the messages into
 * JS objects still takes the main thread, when the call's callback runs. Its records are filtered by the
 * assignment when they arrive and again when handed out; a revocation drops the ones of its partitions,
 * and a rewind waits for it and discards it before seeking.
 */
import Kafka, { type KafkaConsumer, type LibrdKafkaError, type Message, type TopicPartition as RdTopicPartition } from 'node-rdkafka';

import { RaretideError } from '../../config/errors.js';
import type { KafkaConfig } from '../../config/schema.js';
import type { AssignmentListener, BatchSource, InputMessage, SourcePosition } from '../pipeline/source-sink.js';
import { describePartition, type TopicPartition } from '../pipeline/topic-partition.js';
import { callbackPromise, DEADLINE_GRACE_MS, withDeadline } from './callback-promise.js';
import { groupConsumerSettings, redactSettings, type ClientSettings } from './client-settings.js';
import type { ConsumerGroupLink } from './consumer-group-link.js';
import { toInputMessage } from './input-message.js';
import { toKafkaError } from './kafka-errors.js';
import { silentLogger, type KafkaLogger } from './kafka-log.js';
import { WarningThrottle } from './warning-throttle.js';
import { GroupCommits } from './offset-commits.js';
import { PartitionMap } from './partition-map.js';

/** librdkafka's rebalance_cb codes. */
const ERR_ASSIGN_PARTITIONS = -175;
const ERR_REVOKE_PARTITIONS = -174;

export interface ConsumerSourceTimeouts {
  /** @default 30000 */
  readonly connectMs: number;
  /** Seeking back after an aborted batch. @default 10000 */
  readonly seekMs: number;
  /** The whole of `close`. @default 30000 */
  readonly closeMs: number;
}

const DEFAULT_TIMEOUTS: ConsumerSourceTimeouts = { connectMs: 30_000, seekMs: 10_000, closeMs: 30_000 };

/** What one `consume` brought: the admitted records, or why it failed. */
interface ReadAhead {
  readonly records: readonly InputMessage[];
  readonly failure: RaretideError | undefined;
  /** `assignmentChanges` when the records were admitted. */
  readonly assignmentChanges: number;
}

export interface ConsumerSourceOptions {
  readonly kafka: KafkaConfig;
  /** `source.topic`. */
  readonly topic: string;
  /** `source.group`. */
  readonly group: string;
  /**
   * Where a partition without a committed offset starts.
   * @default earliest
   */
  readonly startWithoutCommit?: 'earliest' | 'latest';
  /**
   * Longest one `consume(n)` call waits for the next record; also how often `nextBatch` returns (empty)
   * on an idle or paused topic.
   * @default 100
   */
  readonly pollTimeoutMs?: number;
  readonly timeouts?: Partial<ConsumerSourceTimeouts>;
  /** librdkafka properties laid over raretide's (tuning and tests; not for the ones the guarantee needs). */
  readonly settings?: ClientSettings;
  /** @default silent */
  readonly log?: KafkaLogger;
}

export class KafkaConsumerSource implements BatchSource, ConsumerGroupLink {
  readonly consumer: KafkaConsumer;
  private readonly timeouts: ConsumerSourceTimeouts;
  private readonly log: KafkaLogger;
  /** Client errors librdkafka retries by itself: one line per kind every few seconds (an outage brings dozens). */
  private readonly warnings: WarningThrottle;
  private readonly commits: GroupCommits;
  private listener: AssignmentListener | undefined;
  /** Partitions assigned to this member, and those whose revocation is under way. */
  private readonly assigned = new PartitionMap<true>();
  private readonly revoking = new PartitionMap<true>();
  /** Counts changes to `assigned` and `revoking`, so records admitted since none need no second look. */
  private assignmentChanges = 0;
  /**
   * Where to go back to after an abort: the positions of the last successful checkpoint (its commit may
   * still be unanswered — should it fail, only a restart reads those records again), else the first
   * offset read since assignment.
   */
  private readonly lastCheckpointed = new PartitionMap<bigint>();
  private readonly firstRead = new PartitionMap<bigint>();
  /**
   * Per partition, the offset after the last record admitted. librdkafka can deliver records twice: a
   * `pause` stores the position of the last record already handed to the application as where `resume`
   * fetches from, so records a `consume` in flight on the thread pool takes meanwhile come again after
   * the resume (from the start, by `auto.offset.reset`, if none had been handed out yet). Records below
   * this offset are such repeats and are dropped; it is cleared wherever the position legitimately moves
   * back (assignment, revocation, rewind).
   */
  private readonly nextToAdmit = new PartitionMap<number>();
  private rebalancing: Promise<void> = Promise.resolve();
  /** The latest `consume` call, settled or not (close waits for it). */
  private consuming: Promise<unknown> = Promise.resolve();
  /** The read-ahead `consume` started after the last batch was handed out; never rejects. */
  private ahead: Promise<ReadAhead> | undefined;
  private paused = false;
  /** Records that arrived although paused (librdkafka normally sends none); handed out after `resume`. */
  private held: InputMessage[] = [];
  /** A failure outside `nextBatch` (rebalance listener, fatal client error), raised by the next call. */
  private failure: RaretideError | undefined;
  /** Set by `stop`: no more reading, and revocations no longer wait for the listener. */
  private closing = false;
  private disconnecting = false;

  private constructor(options: ConsumerSourceOptions, rebalanceTarget: { source?: KafkaConsumerSource }) {
    this.timeouts = { ...DEFAULT_TIMEOUTS, ...options.timeouts };
    this.log = options.log ?? silentLogger;
    this.warnings = new WarningThrottle(this.log);
    const { global, topic } = groupConsumerSettings(options.kafka, options);
    const settings = { ...global, ...options.settings };
    this.log({ level: 'debug', message: 'consumer settings', fields: { settings: redactSettings(settings) } });
    this.consumer = new Kafka.KafkaConsumer(
      {
        ...settings,
        rebalance_cb: (error: LibrdKafkaError | undefined, assignment: RdTopicPartition[]) => rebalanceTarget.source?.rebalance(error, assignment),
      },
      topic,
    );
    this.commits = new GroupCommits(this.consumer);
    this.consumer.on('event.error', (error) => this.clientError(error));
  }

  /** Connects, subscribes to `topic` and returns the source; partitions arrive with the first batches. */
  static async connect(options: ConsumerSourceOptions): Promise<KafkaConsumerSource> {
    const target: { source?: KafkaConsumerSource } = {};
    const source = new KafkaConsumerSource(options, target);
    target.source = source;
    const { connectMs } = source.timeouts;
    await callbackPromise('consumer connect', connectMs + DEADLINE_GRACE_MS, (done) => source.consumer.connect({ timeout: connectMs }, done));
    source.consumer.setDefaultConsumeTimeout(options.pollTimeoutMs ?? 100);
    try {
      source.consumer.subscribe([options.topic]);
    } catch (error) {
      await source.close();
      throw toKafkaError(`subscribing to ${options.topic}`, error);
    }
    return source;
  }

  onAssignment(listener: AssignmentListener): void {
    this.listener = listener;
  }

  async nextBatch(maxMessages: number): Promise<readonly InputMessage[] | null> {
    this.raiseFailure();
    if (this.closing) throw new RaretideError('kafka.closed', 'nextBatch called after close', { retriable: false });
    if (!this.paused && this.held.length > 0) {
      return this.held.splice(0, maxMessages).filter(({ topic, partition }) => this.mayHandOut(topic, partition));
    }
    const read = await (this.takeAhead() ?? this.read(maxMessages));
    if (read.failure !== undefined) throw read.failure;
    this.raiseFailure();
    // Admitted when they arrived; a rebalance may have begun since.
    const batch = read.assignmentChanges === this.assignmentChanges ? read.records : read.records.filter(({ topic, partition }) => this.mayHandOut(topic, partition));
    if (this.paused) {
      this.held.push(...batch);
      return [];
    }
    if (!this.closing) this.ahead = this.read(maxMessages);
    // A read-ahead asked for the previous call's count; what exceeds this one's waits (nothing is held here).
    if (batch.length > maxMessages) this.held = batch.slice(maxMessages);
    return batch.length > maxMessages ? batch.slice(0, maxMessages) : batch;
  }

  private takeAhead(): Promise<ReadAhead> | undefined {
    const ahead = this.ahead;
    this.ahead = undefined;
    return ahead;
  }

  /** One `consume`, admitted as it arrives; a failure is returned, not thrown (a read-ahead may go unclaimed). */
  private read(maxMessages: number): Promise<ReadAhead> {
    return this.consume(maxMessages).then(
      (messages) => ({ records: this.admit(messages), failure: undefined, assignmentChanges: this.assignmentChanges }),
      (failure: RaretideError) => ({ records: [], failure, assignmentChanges: this.assignmentChanges }),
    );
  }

  /** The records of `messages` this member may hand out now, as InputMessages. */
  private admit(messages: readonly Message[]): InputMessage[] {
    const batch: InputMessage[] = [];
    // A consume brings runs of one partition: the partition is looked up once per run.
    let run: Message | undefined;
    let admitted = false;
    let next = -1;
    let repeats = 0;
    const endRun = () => {
      if (run !== undefined && admitted && next >= 0) this.nextToAdmit.set(run.topic, run.partition, next);
    };
    for (const message of messages) {
      if (run === undefined || message.partition !== run.partition || message.topic !== run.topic) {
        endRun();
        run = message;
        admitted = this.mayHandOut(message.topic, message.partition);
        next = this.nextToAdmit.get(message.topic, message.partition) ?? -1;
        if (admitted && !this.firstRead.has(message.topic, message.partition)) this.firstRead.set(message.topic, message.partition, BigInt(message.offset));
      }
      if (!admitted) continue;
      if (message.offset < next) {
        repeats += 1;
        continue;
      }
      next = message.offset + 1;
      batch.push(toInputMessage(message));
    }
    endRun();
    if (repeats > 0) this.log({ level: 'debug', message: 'dropped records librdkafka delivered again after a pause', fields: { repeats } });
    return batch;
  }

  /**
   * Records of partitions on their way out are left for the next owner (their positions are not
   * committed past them); ones of partitions no longer assigned are stale.
   */
  private mayHandOut(topic: string, partition: number): boolean {
    return this.assigned.has(topic, partition) && !this.revoking.has(topic, partition);
  }

  pause(): void {
    if (this.paused) return;
    this.paused = true;
    this.pausePartitions(this.assigned.keys(), true);
  }

  resume(): void {
    if (!this.paused) return;
    this.paused = false;
    this.pausePartitions(this.assigned.keys(), false);
  }

  /** The partitions this member owns now (for metrics and lag). */
  assignment(): TopicPartition[] {
    return this.assigned.keys();
  }

  /**
   * Sends the commit and returns without waiting for the broker's answer (see GroupCommits): a failed
   * commit fails the next call instead. Commits still unanswered are made synchronously before their
   * partitions are revoked and on `stop`.
   */
  async commit(positions: readonly SourcePosition[]): Promise<void> {
    const failure = this.commits.takeFailure();
    if (failure !== undefined) throw failure;
    this.commits.send(positions.map(({ topic, partition, nextOffset }) => ({ topic, partition, offset: Number(nextOffset) })));
    this.checkpointed(positions);
  }

  committedInTransaction(positions: readonly SourcePosition[]): void {
    this.checkpointed(positions);
  }

  private checkpointed(positions: readonly SourcePosition[]): void {
    for (const { topic, partition, nextOffset } of positions) this.lastCheckpointed.set(topic, partition, nextOffset);
  }

  async rewindToCommitted(): Promise<void> {
    // A consume still under way would hand out records from before the seek: let it finish, then drop them.
    await this.consuming;
    this.ahead = undefined;
    this.held = [];
    this.nextToAdmit.clear();
    for (const { topic, partition } of this.assigned.keys()) {
      const target = this.lastCheckpointed.get(topic, partition) ?? this.firstRead.get(topic, partition);
      if (target === undefined) continue;
      await callbackPromise(`seeking ${describePartition({ topic, partition })} back to offset ${target}`, this.timeouts.seekMs + DEADLINE_GRACE_MS, (done) =>
        this.consumer.seek({ topic, partition, offset: Number(target) }, this.timeouts.seekMs, done));
    }
  }

  /**
   * Stops reading but stays connected: later `nextBatch` calls fail; the `consume` in flight and a
   * rebalance under way are waited for (bounded by `timeouts.closeMs`); commits still unanswered are
   * made synchronously, so the last checkpoint's positions are durable when this resolves.
   */
  async stop(): Promise<void> {
    if (this.closing) return;
    this.closing = true;
    const { closeMs } = this.timeouts;
    try {
      await withDeadline('waiting for the last consume call', closeMs, this.consuming);
      await withDeadline('finishing the rebalance under way', closeMs, this.rebalancing);
    } catch (error) {
      this.log({ level: 'warn', message: 'stopping the consumer without waiting further', error: toKafkaError('consumer stop', error) });
    }
    if (this.consumer.isConnected()) this.commits.commitOutstandingSync();
  }

  /**
   * Stops reading and leaves the group: `stop`, then disconnect (librdkafka's
   * close revokes the assignment through the rebalance callback, which then unassigns without asking the
   * listener: the core has checkpointed before closing). Bounded by `timeouts.closeMs`.
   */
  async close(): Promise<void> {
    if (this.disconnecting) return;
    this.disconnecting = true;
    try {
      await this.stop();
    } finally {
      if (this.consumer.isConnected()) await callbackPromise('consumer disconnect', this.timeouts.closeMs, (done) => this.consumer.disconnect(done));
    }
  }

  private consume(maxMessages: number): Promise<Message[]> {
    const consumed = new Promise<Message[]>((resolve, reject) => {
      this.consumer.consume(maxMessages, (error, messages) => (error ? reject(toKafkaError('consume', error)) : resolve(messages)));
    });
    this.consuming = consumed.catch(() => undefined);
    return consumed;
  }

  private rebalance(error: LibrdKafkaError | undefined, assignment: RdTopicPartition[]): void {
    const partitions = assignment.map(({ topic, partition }) => ({ topic, partition }));
    const code = error?.code;
    this.rebalancing = this.rebalancing.then(() => {
      if (code === ERR_ASSIGN_PARTITIONS) return this.assign(partitions);
      if (code === ERR_REVOKE_PARTITIONS) return this.revoke(partitions);
      // Any other code is a failed rebalance: librdkafka's guidance is to drop the assignment.
      this.log({ level: 'error', message: 'rebalance failed; dropping the assignment', error: toKafkaError('rebalance', error) });
      return this.revoke(partitions);
    });
  }

  private async assign(partitions: TopicPartition[]): Promise<void> {
    try {
      if (!this.closing) await this.listener?.assigned(partitions);
    } catch (error) {
      this.fail(new RaretideError('kafka.assignment', `preparing newly assigned partitions ${partitions.map(describePartition).join(', ')} failed: ${(error as Error).message}`, { retriable: true, cause: error }));
    } finally {
      this.applyAssignment(partitions, true);
      if (this.paused) this.pausePartitions(partitions, true);
      this.log({ level: 'info', message: 'partitions assigned', fields: { partitions: partitions.map(describePartition) } });
    }
  }

  private async revoke(partitions: TopicPartition[]): Promise<void> {
    this.assignmentChanges += 1;
    for (const { topic, partition } of partitions) this.revoking.set(topic, partition, true);
    try {
      if (!this.closing) await this.listener?.revoked(partitions);
      // The next owner starts from the committed offsets: make the last checkpoint's commit durable first.
      this.commits.commitOutstandingSync(partitions);
    } catch (error) {
      this.fail(new RaretideError('kafka.assignment', `checkpointing revoked partitions ${partitions.map(describePartition).join(', ')} failed: ${(error as Error).message}`, { retriable: true, cause: error }));
    } finally {
      this.commits.forget(partitions);
      this.applyAssignment(partitions, false);
      for (const { topic, partition } of partitions) {
        for (const map of [this.revoking, this.lastCheckpointed, this.firstRead]) map.delete(topic, partition);
      }
      this.held = this.held.filter((message) => this.assigned.has(message.topic, message.partition));
      this.ahead = this.ahead?.then((read) => ({ ...read, records: read.records.filter((message) => this.assigned.has(message.topic, message.partition)) }));
      this.log({ level: 'info', message: 'partitions revoked', fields: { partitions: partitions.map(describePartition) } });
    }
  }

  /** (Un)assigns in librdkafka — every rebalance callback must end here, or the group stalls. */
  private applyAssignment(partitions: TopicPartition[], add: boolean): void {
    const cooperative = this.consumer.rebalanceProtocol() !== 'EAGER';
    try {
      if (add) {
        if (cooperative) this.consumer.incrementalAssign(partitions);
        else this.consumer.assign(partitions);
      } else if (cooperative) this.consumer.incrementalUnassign(partitions);
      else this.consumer.unassign();
    } catch (error) {
      if (!this.closing) this.fail(toKafkaError(add ? 'assigning partitions' : 'unassigning partitions', error));
    }
    this.assignmentChanges += 1;
    for (const { topic, partition } of partitions) {
      if (add) this.assigned.set(topic, partition, true);
      else this.assigned.delete(topic, partition);
      this.nextToAdmit.delete(topic, partition);
    }
  }

  private pausePartitions(partitions: TopicPartition[], pause: boolean): void {
    if (partitions.length === 0 || !this.consumer.isConnected()) return;
    try {
      if (pause) this.consumer.pause(partitions);
      else this.consumer.resume(partitions);
    } catch (error) {
      this.fail(toKafkaError(pause ? 'pausing partitions' : 'resuming partitions', error));
    }
  }

  private clientError(error: LibrdKafkaError): void {
    const classified = toKafkaError('consumer', error);
    if (classified.code === 'kafka.fatal' || classified.code === 'kafka.fenced') this.fail(classified);
    else this.warnings.warn({ level: 'warn', message: 'consumer client error (librdkafka retries on its own)', error: classified });
  }

  private fail(error: RaretideError): void {
    this.failure ??= error;
    this.log({ level: 'error', message: error.message, error });
  }

  private raiseFailure(): void {
    if (this.failure !== undefined) throw this.failure;
  }
}

/**
 * The Kafka sink: a node-rdkafka Producer writing OutputMessages to the output or dead-letter topic, and
 * balance state to the state topic, under one of two guarantees.
 *
 * at-least-once — `checkpoint` sends the balance state behind the outputs, flushes, and checks that
 *   everything sent since the last checkpoint was delivered; only then are the positions committed in
 *   the consumer group. A crash anywhere repeats outputs but never loses one. Outputs and state share one
 *   flush (a broker round trip per checkpoint saved, measured ~2–3 ms): should an output have failed,
 *   `abort` rewrites the state last made durable, so the persisted counts never run ahead of the
 *   committed positions except across a crash — the same window a write-state-then-commit order has.
 * exactly-once — a transactional producer: the first `send` of a batch begins a transaction; `checkpoint`
 *   adds the state records and the positions (`sendOffsetsToTransaction` with the consumer's group
 *   metadata) and commits. `abort` aborts it. read_committed readers see each batch once or not at all.
 *
 * A full local queue (−184) is back-pressure: `send` waits for the queue to drain and tries again, so no
 * message is ever dropped. A failed delivery fails the next checkpoint; `abort` then discards the interval
 * (aborting the transaction, or just waiting out every report) and seeks the group consumer back to its
 * last commit, so the core can process the same records again.
 */
import Kafka, { type LibrdKafkaError, type MessageHeader, type Producer } from 'node-rdkafka';

import { RaretideError } from '../../config/errors.js';
import type { DeliveryConfig, KafkaConfig, SinkConfig } from '../../config/schema.js';
import type { PartitionBalanceState } from '../pipeline/balance-state.js';
import type { BatchSink, Checkpoint, DeliveryReport, OutputMessage } from '../pipeline/source-sink.js';
import type { TopicPartition } from '../pipeline/topic-partition.js';
import { KafkaAdmin } from './admin.js';
import { callbackPromise, DEADLINE_GRACE_MS } from './callback-promise.js';
import { defaultStateTopic, producerSettings, redactSettings, transactionalIdFor, type ClientSettings } from './client-settings.js';
import type { ConsumerGroupLink } from './consumer-group-link.js';
import { DeliveryTracker } from './delivery-tracker.js';
import { toKafkaError } from './kafka-errors.js';
import { silentLogger, type KafkaLogger } from './kafka-log.js';
import { WarningThrottle } from './warning-throttle.js';
import { ProducerQueue } from './producer-queue.js';
import { loadBalanceStates, STATE_TOPIC_CONFIG, stateRecords, StateRollback, type StateRecord } from './state-topic.js';
import { transactionCall } from './transaction-calls.js';

export interface ProducerSinkTimeouts {
  /** @default 30000 */
  readonly connectMs: number;
  /** Each flush of a checkpoint, and each transaction call (librdkafka retries inside it). @default 30000 */
  readonly checkpointMs: number;
  /**
   * Longest `send` waits for room in a full queue. librdkafka fails queued messages after its
   * `message.timeout.ms` (default 300000), which frees room in any case.
   * @default 300000
   */
  readonly queueFullMs: number;
  /** The whole of `close`. @default 30000 */
  readonly closeMs: number;
}

const DEFAULT_TIMEOUTS: ProducerSinkTimeouts = { connectMs: 30_000, checkpointMs: 30_000, queueFullMs: 300_000, closeMs: 30_000 };

/** How often librdkafka's callbacks (delivery reports, errors) are served. */
const POLL_INTERVAL_MS = 20;

export interface ProducerSinkOptions {
  readonly kafka: KafkaConfig;
  /** `sink.topic` and `sink.deadLetterTopic`. */
  readonly sink: Pick<SinkConfig, 'topic' | 'deadLetterTopic'>;
  /** `delivery.guarantee` and `delivery.stateTopic`. */
  readonly delivery: Pick<DeliveryConfig, 'guarantee' | 'stateTopic'>;
  /** `source.group`: names the default state topic and the transactional id. */
  readonly group: string;
  /**
   * This replica's stable identity, part of the transactional id (see `transactionalIdFor`).
   * Required for exactly-once.
   */
  readonly instanceId?: string;
  /** The group consumer whose positions checkpoints commit; absent: positions are not committed. */
  readonly consumerGroup?: ConsumerGroupLink;
  /**
   * Report every delivery to `onDelivery` listeners (for delivery-latency metrics); costs main-thread
   * time per message. Otherwise only failures are reported, and only to the checkpoint.
   * @default false
   */
  readonly perMessageReports?: boolean;
  /**
   * Create the state topic (compacted) if it is missing.
   * @default true
   */
  readonly ensureStateTopic?: boolean;
  readonly timeouts?: Partial<ProducerSinkTimeouts>;
  /** librdkafka properties laid over raretide's (tuning and tests; not for the ones the guarantee needs). */
  readonly settings?: ClientSettings;
  /** @default Date.now */
  readonly clock?: () => number;
  /** @default silent */
  readonly log?: KafkaLogger;
}

export class KafkaProducerSink implements BatchSink {
  readonly stateTopic: string;
  private readonly exactlyOnce: boolean;
  private readonly timeouts: ProducerSinkTimeouts;
  private readonly tracker: DeliveryTracker;
  private readonly queue: ProducerQueue;
  private readonly log: KafkaLogger;
  /** Client errors librdkafka retries by itself: one line per kind every few seconds (an outage brings dozens). */
  private readonly warnings: WarningThrottle;
  private readonly stateRollback = new StateRollback();
  private inTransaction = false;
  /** Set once the producer cannot be used any more; every later call raises it. */
  private fatal: RaretideError | undefined;
  private closed = false;

  private constructor(
    private readonly producer: Producer,
    private readonly options: ProducerSinkOptions,
  ) {
    this.stateTopic = options.delivery.stateTopic ?? defaultStateTopic(options.group);
    this.exactlyOnce = options.delivery.guarantee === 'exactly-once';
    this.timeouts = { ...DEFAULT_TIMEOUTS, ...options.timeouts };
    this.log = options.log ?? silentLogger;
    this.warnings = new WarningThrottle(this.log);
    this.tracker = new DeliveryTracker(options.perMessageReports === true, options.clock ?? Date.now);
    this.queue = new ProducerQueue(producer, this.tracker, this.timeouts.queueFullMs, () => this.raiseIfUnusable());
    producer.on('delivery-report', this.tracker.onReport);
    producer.on('event.error', (error) => this.clientError(error));
  }

  /** Connects the producer, creates the state topic if needed and, for exactly-once, initialises transactions. */
  static async create(options: ProducerSinkOptions): Promise<KafkaProducerSink> {
    const { guarantee } = options.delivery;
    if (guarantee === 'exactly-once' && (options.instanceId === undefined || options.instanceId === '')) {
      throw new RaretideError('kafka.config', 'exactly-once delivery needs a stable instance id per worker replica (it names the transactional id); pass instanceId', { retriable: false });
    }
    const transactionalId = guarantee === 'exactly-once' ? transactionalIdFor(options.group, options.instanceId!) : undefined;
    const settings = producerSettings(options.kafka, { group: options.group, guarantee, transactionalId, perMessageReports: options.perMessageReports });
    const producer = new Kafka.Producer({ ...settings, ...options.settings });
    const sink = new KafkaProducerSink(producer, options);
    sink.log({ level: 'debug', message: 'producer settings', fields: { settings: redactSettings({ ...settings, ...options.settings }) } });
    const { connectMs, checkpointMs } = sink.timeouts;
    await callbackPromise('producer connect', connectMs + DEADLINE_GRACE_MS, (done) => producer.connect({ timeout: connectMs }, done));
    producer.setPollInterval(POLL_INTERVAL_MS);
    try {
      if (options.ensureStateTopic !== false) await sink.ensureStateTopic();
      if (sink.exactlyOnce) await transactionCall('initTransactions', checkpointMs, (timeout, done) => producer.initTransactions(timeout, done));
    } catch (error) {
      await sink.disconnect();
      throw error;
    }
    return sink;
  }

  async loadState(partitions: readonly TopicPartition[]): Promise<(PartitionBalanceState | undefined)[]> {
    const states = await loadBalanceStates({ kafka: this.options.kafka, stateTopic: this.stateTopic, partitions });
    this.stateRollback.loaded(partitions, states);
    return states;
  }

  async send(messages: readonly OutputMessage[]): Promise<void> {
    this.raiseIfUnusable();
    if (messages.length === 0) return;
    await this.beginIfNeeded();
    const { topic, deadLetterTopic } = this.options.sink;
    const withOpaque = this.tracker.perMessage;
    for (const message of messages) {
      const record = {
        topic: message.route === 'output' ? topic : deadLetterTopic,
        value: message.value,
        key: message.key,
        timestamp: message.timestamp,
        opaque: withOpaque ? message : undefined,
        headers: message.headers.length === 0 ? undefined : (message.headers as MessageHeader[]),
      };
      // The synchronous path is the common one; only a full queue costs an await.
      if (!this.queue.tryProduce(record)) await this.queue.produce(record);
    }
  }

  async checkpoint({ positions, state }: Checkpoint): Promise<void> {
    this.raiseIfUnusable();
    if (this.exactlyOnce) await this.commitTransaction(positions, state);
    else await this.commitAtLeastOnce(positions, state);
  }

  async abort(): Promise<void> {
    this.raiseIfUnusable();
    if (this.exactlyOnce) {
      if (this.inTransaction) {
        try {
          await transactionCall('abortTransaction', this.timeouts.checkpointMs, (timeout, done) => this.producer.abortTransaction(timeout, done));
        } catch (error) {
          throw this.noteFatal(error as RaretideError);
        }
        this.inTransaction = false;
        // The purged messages' reports come after the abort; wait for them, so none lands in the next interval.
        await this.tracker.settled(this.timeouts.checkpointMs);
      }
    } else {
      // Outputs cannot be taken back; wait for every report so none is counted against the next interval.
      await this.queue.flush('flush before abort', this.timeouts.checkpointMs).catch(() => undefined);
      await this.tracker.settled(this.timeouts.checkpointMs);
      this.tracker.reset();
      const restore = this.stateRollback.rollback();
      if (restore.length > 0) {
        await this.produceStates(restore);
        await this.queue.flushAndCheck('restoring the balance state of the last checkpoint', this.timeouts.checkpointMs);
      }
    }
    this.tracker.reset();
    await this.options.consumerGroup?.rewindToCommitted();
  }

  onDelivery(listener: (report: DeliveryReport) => void): void {
    if (!this.tracker.perMessage) {
      throw new RaretideError('kafka.config', 'onDelivery needs a sink created with perMessageReports: true (only failures are reported otherwise)', { retriable: false });
    }
    this.tracker.addListener(listener);
  }

  /**
   * Shutdown per NODE-RDKAFKA.md: abort a transaction still open (its batch was never checkpointed),
   * flush and check what is left (`disconnect` alone ignores flush errors), disconnect. Positions are
   * committed by checkpoints only, so the core checkpoints its last batch before closing.
   */
  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    let failure: unknown;
    try {
      if (this.fatal === undefined) {
        if (this.inTransaction) {
          await transactionCall('abortTransaction', this.timeouts.closeMs, (timeout, done) => this.producer.abortTransaction(timeout, done));
          this.inTransaction = false;
        }
        await this.queue.flush('flush on close', this.timeouts.closeMs);
        await this.tracker.settled(this.timeouts.closeMs);
        failure = this.tracker.failure();
      }
    } catch (error) {
      failure = error;
    }
    await this.disconnect();
    if (failure !== undefined) throw toKafkaError('closing the producer', failure);
  }

  private async commitAtLeastOnce(positions: Checkpoint['positions'], state: readonly PartitionBalanceState[]): Promise<void> {
    const records = stateRecords(state);
    this.stateRollback.sent(records);
    await this.produceStates(records);
    await this.queue.flushAndCheck('flushing outputs and balance state', this.timeouts.checkpointMs);
    this.stateRollback.delivered();
    this.tracker.reset();
    if (positions.length > 0) await this.options.consumerGroup?.commit(positions);
  }

  private async produceStates(records: readonly StateRecord[]): Promise<void> {
    for (const { key, value } of records) await this.queue.produce({ topic: this.stateTopic, value, key });
  }

  private async commitTransaction(positions: Checkpoint['positions'], state: readonly PartitionBalanceState[]): Promise<void> {
    const group = this.options.consumerGroup;
    if (!this.inTransaction && state.length === 0 && (positions.length === 0 || group === undefined)) return;
    await this.beginIfNeeded();
    await this.produceStates(stateRecords(state));
    const { checkpointMs } = this.timeouts;
    try {
      // commitTransaction flushes too, but at librdkafka's 10 ms granularity (see ProducerQueue.flush).
      await this.queue.flushAndCheck('flushing the transaction', checkpointMs).catch((failed: RaretideError) => {
        throw new RaretideError('kafka.transaction-abort', `${failed.message}; the transaction must be aborted`, { retriable: true, cause: failed });
      });
      if (group !== undefined && positions.length > 0) {
        const offsets = positions.map(({ topic, partition, nextOffset }) => ({ topic, partition, offset: Number(nextOffset) }));
        await transactionCall('sendOffsetsToTransaction', checkpointMs, (timeout, done) => this.producer.sendOffsetsToTransaction(offsets, group.consumer, timeout, done));
      }
      await transactionCall('commitTransaction', checkpointMs, (timeout, done) => this.producer.commitTransaction(timeout, done));
    } catch (error) {
      throw this.noteFatal(error as RaretideError);
    }
    this.inTransaction = false;
    this.tracker.reset();
    group?.committedInTransaction(positions);
  }

  private async beginIfNeeded(): Promise<void> {
    if (!this.exactlyOnce || this.inTransaction) return;
    // beginTransaction is local to librdkafka; its errors carry no flags and mean a misuse or a dead producer.
    try {
      await callbackPromise('beginTransaction', this.timeouts.checkpointMs, (done) => this.producer.beginTransaction(done));
    } catch (error) {
      throw this.noteFatal(new RaretideError('kafka.fatal', (error as Error).message, { retriable: false, cause: error }));
    }
    this.inTransaction = true;
  }

  private async ensureStateTopic(): Promise<void> {
    const admin = await KafkaAdmin.connect(this.options.kafka, this.timeouts.connectMs);
    try {
      await admin.ensureTopics([{ topic: this.stateTopic, partitions: 1, config: STATE_TOPIC_CONFIG }]);
    } finally {
      await admin.close();
    }
  }

  private async disconnect(): Promise<void> {
    if (!this.producer.isConnected()) return;
    // Producer#disconnect flushes first (ignoring errors; ours were checked already) with this timeout.
    await callbackPromise('producer disconnect', this.timeouts.closeMs + DEADLINE_GRACE_MS, (done) => this.producer.disconnect(this.timeouts.closeMs, done)).catch((error) => {
      this.log({ level: 'warn', message: 'producer disconnect did not finish cleanly', error: toKafkaError('producer disconnect', error) });
    });
  }

  private clientError(error: LibrdKafkaError): void {
    const classified = toKafkaError('producer', error);
    if (classified.code === 'kafka.fatal' || classified.code === 'kafka.fenced') this.noteFatal(classified);
    else this.warnings.warn({ level: 'warn', message: 'producer client error (librdkafka retries on its own)', error: classified });
  }

  /** Remembers fatal errors (the producer is then unusable) and returns the error for throwing. */
  private noteFatal(error: RaretideError): RaretideError {
    if (!error.retriable && (error.code === 'kafka.fatal' || error.code === 'kafka.fenced')) {
      this.fatal ??= error;
      this.log({ level: 'error', message: error.message, error });
    }
    return error;
  }

  private raiseIfUnusable(): void {
    if (this.fatal !== undefined) throw this.fatal;
    if (this.closed) throw new RaretideError('kafka.closed', 'the sink is closed', { retriable: false });
  }
}

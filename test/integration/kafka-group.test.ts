/**
 * The group consumer source on the real broker: pausing without losing the group membership, and a
 * cooperative rebalance between two members whose revocations wait for the batch in hand.
 */
import { afterAll, describe, expect, it } from 'vitest';

import type { KafkaConfig } from '../../config/schema.js';
import { KafkaConsumerSource } from '../../connector/kafka/consumer-source.js';
import { KafkaProducerSink } from '../../connector/kafka/producer-sink.js';
import { shutdownKafkaAdapters } from '../../connector/kafka/shutdown.js';
import type { InputMessage } from '../../connector/pipeline/source-sink.js';
import { COPIED_FROM, committedOffsets, copyOf, endOffsets, fillTopic, headerText, positionsOf, readWholeTopic } from '../support/adapter-loop.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';

const brokers = kafkaBrokers();
const kafka: KafkaConfig = { brokers, settings: {} };
const createdTopics: string[] = [];

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
});

async function newTopic(prefix: string, partitions: number): Promise<string> {
  const topic = await createUniqueTopic(brokers, { prefix, partitions });
  createdTopics.push(topic);
  return topic;
}

const offsetKey = (message: InputMessage) => `${message.partition}:${message.offset}`;

describe('consumer group source', () => {
  it('returns nothing while paused yet stays in the group past max.poll.interval.ms, then resumes where it was', async () => {
    const topic = await newTopic('group-pause', 3);
    await fillTopic(brokers, topic, 300, 0, 7_301);
    // The shortest poll interval librdkafka accepts with the broker's minimum session timeout (6 s,
    // group.min.session.timeout.ms default): a member that stopped polling would be dropped after 7 s.
    const source = await KafkaConsumerSource.connect({
      kafka, topic, group: uniqueName('group-pause'),
      settings: { 'session.timeout.ms': 6_000, 'heartbeat.interval.ms': 1_000, 'max.poll.interval.ms': 7_000 },
    });
    const revocations: string[] = [];
    source.onAssignment({ assigned: async () => undefined, revoked: async (partitions) => { revocations.push(...partitions.map((p) => String(p.partition))); } });
    const seen = new Set<string>();
    try {
      let batch: readonly InputMessage[] = [];
      while (batch.length === 0) batch = (await source.nextBatch(50))!;
      batch.forEach((message) => seen.add(offsetKey(message)));

      source.pause();
      await fillTopic(brokers, topic, 300, 300, 7_301);
      const pausedUntil = Date.now() + 8_500;
      let whilePaused = 0;
      while (Date.now() < pausedUntil) whilePaused += (await source.nextBatch(100))!.length;
      expect(whilePaused).toBe(0);
      expect(revocations).toEqual([]);
      expect(source.assignment()).toHaveLength(3);

      source.resume();
      const deadline = Date.now() + 30_000;
      while (seen.size < 600 && Date.now() < deadline) {
        for (const message of (await source.nextBatch(200))!) {
          expect(seen.has(offsetKey(message))).toBe(false);
          seen.add(offsetKey(message));
        }
      }
      expect(seen.size).toBe(600);
      expect(revocations).toEqual([]);
    } finally {
      await source.close();
    }
  });

  it('hands partitions to a second member after the batch in hand is checkpointed: no record lost or repeated', async () => {
    const [topic, output, deadLetter] = [await newTopic('group-rebalance-src', 4), await newTopic('group-rebalance-out', 4), await newTopic('group-rebalance-dlq', 1)];
    const total = 2_000;
    await fillTopic(brokers, topic, total, 0, 7_302);
    const group = uniqueName('group-rebalance');
    createdTopics.push(`raretide-state.${group}`);
    const copied = new Set<string>();
    const events: string[] = [];

    /** One worker: copies and checkpoints batch by batch; a revocation waits for the batch in hand. */
    async function startMember(name: string, holdAfter?: { records: number; until: () => boolean }) {
      // Members learn of a rebalance at their next heartbeat (3 s by default); a cooperative one takes two rounds.
      const source = await KafkaConsumerSource.connect({ kafka, topic, group, settings: { 'heartbeat.interval.ms': 300 } });
      const sink = await KafkaProducerSink.create({ kafka, sink: { topic: output, deadLetterTopic: deadLetter }, delivery: { guarantee: 'at-least-once' }, group, consumerGroup: source });
      let inFlight: Promise<void> = Promise.resolve();
      source.onAssignment({
        assigned: async (partitions) => { events.push(`${name}+${partitions.map((p) => p.partition).sort().join(',')}`); },
        revoked: async (partitions) => {
          await inFlight;
          events.push(`${name}-${partitions.map((p) => p.partition).sort().join(',')}`);
        },
      });
      const run = (async () => {
        const deadline = Date.now() + 60_000;
        while (copied.size < total && Date.now() < deadline) {
          // Hold (paused, still polling) until the other member is in, so the rebalance meets unread records.
          if (holdAfter !== undefined && copied.size >= holdAfter.records) {
            if (holdAfter.until()) source.resume();
            else source.pause();
          }
          const batch = (await source.nextBatch(50))!;
          if (batch.length === 0) continue;
          inFlight = (async () => {
            await sink.send(batch.map(copyOf));
            await sink.checkpoint({ positions: positionsOf(batch), state: [] });
          })();
          await inFlight;
          batch.forEach((message) => copied.add(offsetKey(message)));
        }
      })();
      return { source, sink, run };
    }

    const first = await startMember('A', { records: 400, until: () => events.some((event) => event.startsWith('B+')) });
    await waitFor(() => copied.size >= 400, { what: 'member A to copy 400 records' });
    const second = await startMember('B');
    try {
      await Promise.all([first.run, second.run]);
    } finally {
      await shutdownKafkaAdapters(first);
      await shutdownKafkaAdapters(second);
    }

    expect(events).toContain('A+0,1,2,3');
    expect(events.some((event) => event.startsWith('A-'))).toBe(true);
    expect(events.some((event) => event.startsWith('B+'))).toBe(true);
    const copies = await readWholeTopic(brokers, output, 4);
    expect(new Set(copies.map((copy) => headerText(copy.headers, COPIED_FROM))).size).toBe(total);
    expect(copies).toHaveLength(total);
    expect(await committedOffsets(brokers, group, topic, 4)).toEqual(await endOffsets(brokers, topic, 4));
  });
});

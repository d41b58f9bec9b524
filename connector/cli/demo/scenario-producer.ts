/**
 * The stand-in for a real plant in `raretide demo --kafka`: produces the scenario's readings to the
 * source topic at a steady rate, raw Avro keyed by station (so a station's readings stay in order in one
 * partition), stamped with the wall clock. It writes through the worker's own Kafka producer sink, so
 * every send is checked for delivery each second and on stop.
 */
import { setTimeout as delay } from 'node:timers/promises';

import type { KafkaConfig } from '../../../config/schema.js';
import { KafkaProducerSink } from '../../kafka/producer-sink.js';
import type { OutputMessage } from '../../pipeline/source-sink.js';
import type { PumpCondition } from './pump-station-schema.js';
import { PumpStationTelemetry } from './pump-station-telemetry.js';
import { pumpStationSchema } from './scenario-files.js';

export interface ScenarioProducerOptions {
  readonly kafka: KafkaConfig;
  readonly topic: string;
  /** Readings a second. */
  readonly perSecond: number;
  /** Seed of the readings (the demo uses another stream than the history's). */
  readonly seed: number;
  /** `readingId` of the first reading. */
  readonly firstReadingId: number;
  /** Wall clock, ms since the epoch: paces the readings and stamps them. */
  readonly now: () => number;
}

/** Between sends; each send makes up the readings due since the last. */
const TICK_MS = 50;
/** Between delivery checks. */
const CHECK_MS = 1_000;

export class ScenarioProducer {
  /** Readings sent, per class; all of them delivered once `stop` has resolved. */
  readonly produced: Record<PumpCondition, number> = { normal: 0, cavitation: 0, 'seal-leak': 0, 'dry-run': 0 };
  private readonly stopping = new AbortController();
  private readonly running: Promise<void>;

  private constructor(
    private readonly sink: KafkaProducerSink,
    private readonly options: ScenarioProducerOptions,
  ) {
    this.running = this.loop();
    // A failure surfaces through `stop`; keep Node from flagging it before then.
    this.running.catch(() => undefined);
  }

  static async start(options: ScenarioProducerOptions): Promise<ScenarioProducer> {
    const sink = await KafkaProducerSink.create({
      kafka: options.kafka,
      sink: { topic: options.topic, deadLetterTopic: options.topic },
      delivery: { guarantee: 'at-least-once', stateTopic: undefined },
      group: 'raretide-demo-producer',
      ensureStateTopic: false,
    });
    return new ScenarioProducer(sink, options);
  }

  /** Readings sent so far. */
  get total(): number {
    return Object.values(this.produced).reduce((sum, value) => sum + value, 0);
  }

  /** Stops producing, checks the last deliveries and closes; rejects if the producer failed. */
  async stop(): Promise<void> {
    this.stopping.abort();
    try {
      await this.running;
    } finally {
      await this.sink.close();
    }
  }

  private async loop(): Promise<void> {
    const { now, perSecond } = this.options;
    const telemetry = new PumpStationTelemetry({ seed: this.options.seed, firstReadingId: this.options.firstReadingId });
    const started = now();
    let sent = 0;
    let lastCheck = started;
    while (!this.stopping.signal.aborted) {
      const due = Math.floor(((now() - started) * perSecond) / 1000) - sent;
      const messages: OutputMessage[] = [];
      for (let index = 0; index < due; index++) {
        const reading = telemetry.next(now());
        this.produced[reading.condition] += 1;
        messages.push({
          route: 'output',
          value: pumpStationSchema.type.toBuffer(reading),
          key: Buffer.from(reading.stationId),
          headers: [],
          timestamp: reading.observedAt,
          // Readings made here have no source record; the sink only needs a position to name in errors.
          source: { topic: 'raretide-demo-producer', partition: 0, offset: BigInt(sent + index) },
        });
      }
      await this.sink.send(messages);
      sent += messages.length;
      if (now() - lastCheck >= CHECK_MS) {
        lastCheck = now();
        await this.sink.checkpoint({ positions: [], state: [] });
      }
      await delay(TICK_MS, undefined, { signal: this.stopping.signal }).catch(() => undefined);
    }
    await this.sink.checkpoint({ positions: [], state: [] });
  }
}

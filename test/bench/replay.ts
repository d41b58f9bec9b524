/**
 * Replay benchmark: file → file through the shared pipeline, on invented cold-store pallet readings
 * (16 fields; 2 % rare in two classes of 1 % each: compressor_fault and door_ajar), targets 5 % each,
 * k ≤ 5. Goal (issue 6): 1,000,000 records file → file in under 60 s on the project machine.
 *
 *   npx tsx test/bench/replay.ts [--records 1000000] [--codec deflate|null] [--fit-sample 20000]
 *   (BENCH_RECORDS also sets the record count; CI runs a short version, e.g. --records 20000.)
 *
 * Not timed: writing the input (cached in the OS temp directory under a name holding the scenario
 * version, count and codec) and fitting the model on the first records (its time is printed). Timed,
 * side by side: the replay with its targets, and a floor replay of the same file whose targets are
 * already met (decode, label, encode and write; no model call), so the ratio shows what sampling costs.
 * Then `regenerate --verify` of the balanced output is timed too. Topic → file: the same records are
 * produced (not timed) to a 3-partition topic, round-robin, keyed by pallet tag, on KAFKA_BROKERS or else a
 * local broker started for the run (deploy/kafka/local-broker.ts, stopped at the end), and the balanced
 * replay is timed again reading that topic (partition by partition) — records/s beside file → file.
 * `--skip-topic` leaves it out. Prints figures only; asserts nothing.
 */
import { mkdir, mkdtemp, rm, stat, writeFile } from 'node:fs/promises';
import { availableParallelism, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { performance } from 'node:perf_hooks';
import { startLocalBroker, type LocalBroker } from '../../deploy/kafka/local-broker.js';
import { knownSchema } from '../../connector/avro/known-schema.js';
import { ContainerFileReader } from '../../connector/avro/container/container-reader.js';
import { ContainerFileWriter } from '../../connector/avro/container/container-writer.js';
import type { CliContext } from '../../connector/cli/cli-context.js';
import { openSession } from '../../connector/cli/regenerate/regenerate-session.js';
import { verifyOutput, type VerifySummary } from '../../connector/cli/regenerate/verify-output.js';
import { runReplay } from '../../connector/cli/replay/run-replay.js';
import type { ReplaySummary } from '../../connector/cli/replay/replay-summary.js';
import type { AvroRecord } from '../../model/features/avro-types.js';
import { fitModel } from '../../model/fit.js';
import { saveModel } from '../../model/vae/index.js';
import { connectProducer, flushAndDisconnect } from '../support/kafka-clients.js';
import { produceWithBackpressure } from '../support/produce-with-backpressure.js';
import { seededRandom } from '../support/seeded-random.js';
import { createUniqueTopic, deleteTopics } from '../support/topics.js';

/** Bump when the generator changes, so a cached input of the old shape is not reused. */
const SCENARIO_VERSION = 2;

const { values: flags } = parseArgs({
  options: {
    records: { type: 'string', default: process.env.BENCH_RECORDS ?? '1000000' },
    codec: { type: 'string', default: 'deflate' },
    'fit-sample': { type: 'string', default: '20000' },
    'skip-topic': { type: 'boolean', default: false },
  },
});
const recordCount = positiveInteger('--records', flags.records);
const fitSample = positiveInteger('--fit-sample', flags['fit-sample']);
const codec = flags.codec === 'null' || flags.codec === 'deflate' ? flags.codec : fail(`--codec must be null or deflate, got \`${flags.codec}\``);

// Invented scenario: pallet tags in a refrigerated warehouse report every few minutes. A failing
// compressor warms the air and coil and shakes the rack; a door left ajar brings warm, damp air in.
const SCHEMA = {
  type: 'record',
  name: 'PalletReading',
  namespace: 'dev.raretide.bench.coldstore',
  fields: [
    { name: 'readingId', type: 'long' },
    { name: 'palletTag', type: 'string' },
    { name: 'zone', type: { type: 'enum', name: 'Zone', symbols: ['A', 'B', 'C', 'D', 'E', 'F'] } },
    { name: 'rackLevel', type: 'int' },
    { name: 'airTempC', type: 'double' },
    { name: 'productTempC', type: 'double' },
    { name: 'humidityPct', type: 'double' },
    { name: 'doorOpenSec', type: 'int' },
    { name: 'compressorAmps', type: 'double' },
    { name: 'coilTempC', type: 'double' },
    { name: 'vibrationMmS', type: 'double' },
    { name: 'batteryV', type: 'double' },
    { name: 'co2Ppm', type: ['null', 'double'], default: null },
    { name: 'shift', type: { type: 'enum', name: 'Shift', symbols: ['night', 'day', 'evening'] } },
    { name: 'forkliftNearby', type: 'boolean' },
    { name: 'outcome', type: { type: 'enum', name: 'Outcome', symbols: ['normal', 'compressor_fault', 'door_ajar'] } },
  ],
} as const;
const TARGETS = { compressor_fault: 0.05, door_ajar: 0.05 };
const ZONES = ['A', 'B', 'C', 'D', 'E', 'F'];
const SHIFTS = ['night', 'day', 'evening'];

function palletReadings(seed: number): (readingId: number) => AvroRecord {
  const random = seededRandom(seed);
  const normal = () => Math.sqrt(-2 * Math.log(1 - random())) * Math.cos(2 * Math.PI * random());
  const round = (value: number, places: number) => Math.round(value * 10 ** places) / 10 ** places;
  return (readingId) => {
    const roll = random();
    const outcome = roll < 0.01 ? 'compressor_fault' : roll < 0.02 ? 'door_ajar' : 'normal';
    const fault = outcome === 'compressor_fault' ? 1 : 0;
    const door = outcome === 'door_ajar' ? 1 : 0;
    const zone = Math.floor(random() * ZONES.length);
    const airTempC = -18 + 0.8 * normal() + 7 * fault + 4 * door + 0.3 * zone;
    return {
      readingId,
      palletTag: `PT-${(7_340_033 * (readingId + 1)).toString(36).slice(-8).toUpperCase()}`,
      zone: ZONES[zone]!,
      rackLevel: Math.floor(random() * 6),
      airTempC: round(airTempC, 2),
      productTempC: round(-19 + 0.4 * normal() + 0.35 * (airTempC + 18), 2),
      humidityPct: round(Math.min(100, 55 + 6 * normal() + 25 * door), 1),
      doorOpenSec: door === 1 ? Math.round(240 + 120 * random()) : random() < 0.1 ? Math.round(30 * random()) : 0,
      compressorAmps: round(fault === 1 && random() < 0.4 ? 0 : 18 + 2 * normal() + 9 * fault, 2),
      coilTempC: round(-28 + 1.5 * normal() + 15 * fault, 2),
      vibrationMmS: round(Math.abs(1.2 + 0.4 * normal() + 3 * fault * random()), 3),
      batteryV: round(3.6 - 0.6 * random(), 3),
      co2Ppm: random() < 0.8 ? round(420 + 40 * normal() + 150 * door, 1) : null,
      shift: SHIFTS[Math.floor(random() * SHIFTS.length)]!,
      forkliftNearby: random() < 0.15 + 0.3 * door,
      outcome,
    };
  };
}

/** The input file, written once per scenario version, count and codec and kept in the temp directory. */
async function cachedInput(): Promise<string> {
  const directory = join(tmpdir(), 'raretide-bench');
  await mkdir(directory, { recursive: true });
  const path = join(directory, `pallet-readings-v${SCENARIO_VERSION}-${recordCount}-${codec}.avro`);
  if (await stat(path).then(() => true, () => false)) return path;
  const started = performance.now();
  const writer = await ContainerFileWriter.create(path, { schema: knownSchema(SCHEMA, 'pallet-reading.avsc'), codec });
  const next = palletReadings(20_240_601);
  for (let id = 0; id < recordCount; id++) await writer.append(next(id));
  await writer.close();
  console.log(`wrote ${count(recordCount)} records to ${path} in ${seconds(performance.now() - started)} (not timed)`);
  return path;
}

async function* firstRecords(path: string, limit: number): AsyncGenerator<AvroRecord> {
  let taken = 0;
  const reader = await ContainerFileReader.open(path);
  for await (const record of reader) {
    if (taken++ >= limit) break;
    yield record as AvroRecord;
  }
}

/** `topic`: a topic input (its `kafka` and `source` sections, raw framing with SCHEMA). */
async function configFile(label: string, modelDir: string, targets: Record<string, number>, topic?: { brokers: string; name: string }): Promise<string> {
  const path = join(workspace, `${label}.yaml`);
  const targetLines = Object.entries(targets).map(([name, share]) => `    ${name}: ${share}`);
  const topicLines: string[] = [];
  if (topic !== undefined) {
    const schemaFile = join(workspace, 'pallet-reading.avsc');
    await writeFile(schemaFile, JSON.stringify(SCHEMA));
    topicLines.push(`kafka: {brokers: "${topic.brokers}"}`, `source: {topic: ${topic.name}, group: bench-replay, framing: {kind: raw, schemaFile: ${schemaFile}}}`);
  }
  const text = [...topicLines, 'label: {from: field, path: outcome}', 'balance:', '  targets:', ...targetLines, '  maxPerRecord: 5', '  seed: 7', 'model:', `  dir: ${modelDir}`, ''].join('\n');
  return writeFile(path, text).then(() => path);
}

interface Measured<T> {
  readonly result: T;
  /** Peak resident set size seen meanwhile (sampled every 100 ms). */
  readonly rssPeak: number;
  /** CPU time of the process meanwhile (user + system, all threads): on a shared machine it varies less than elapsed time. */
  readonly cpuMs: number;
}

async function measured<T>(work: () => Promise<T>): Promise<Measured<T>> {
  let rssPeak = process.memoryUsage.rss();
  const sampler = setInterval(() => (rssPeak = Math.max(rssPeak, process.memoryUsage.rss())), 100);
  const cpuBefore = process.cpuUsage();
  try {
    const result = await work();
    const cpu = process.cpuUsage(cpuBefore);
    return { result, rssPeak: Math.max(rssPeak, process.memoryUsage.rss()), cpuMs: (cpu.user + cpu.system) / 1000 };
  } finally {
    clearInterval(sampler);
  }
}

async function timedReplay(label: string, modelDir: string, targets: Record<string, number>, topic?: { brokers: string; name: string }): Promise<Measured<ReplaySummary>> {
  const config = await configFile(label, modelDir, targets, topic);
  return measured(() =>
    runReplay(
      {
        configPath: config,
        input: topic === undefined ? { kind: 'file', path: input } : { kind: 'topic', start: { from: 'earliest' } },
        output: { kind: 'file', path: join(workspace, `${label}.avro`) },
        includeOriginals: true,
        rateCap: false,
        quiet: true,
      },
      { context: QUIET_CONTEXT, clock: { now: () => performance.now() } },
    ),
  );
}

/** `regenerate --verify` of the balanced output: every synthetic record made again and compared. */
async function timedVerify(modelDir: string): Promise<Measured<VerifySummary>> {
  const config = await configFile('balanced', modelDir, TARGETS);
  const session = await openSession({ configPath: config, input }, QUIET_CONTEXT);
  try {
    return await measured(() => verifyOutput(session, { output: join(workspace, 'balanced.avro'), input }, { clock: { now: () => performance.now() } }));
  } finally {
    await session.close();
  }
}

/** The input file's records produced to a new 3-partition topic, round-robin, keyed by pallet tag (not timed). */
async function topicOfInput(brokers: string): Promise<string> {
  const started = performance.now();
  const topic = await createUniqueTopic(brokers, { prefix: 'bench-replay', partitions: 3 });
  const type = knownSchema(SCHEMA, 'pallet-reading.avsc').type;
  const producer = await connectProducer({ 'metadata.broker.list': brokers, 'linger.ms': 20 });
  try {
    let index = 0;
    for await (const record of firstRecords(input, recordCount)) {
      await produceWithBackpressure(producer, { topic, partition: index++ % 3, value: type.toBuffer(record), key: String(record.palletTag) });
    }
  } finally {
    await flushAndDisconnect(producer);
  }
  console.log(`produced ${count(recordCount)} records to ${topic} (3 partitions) in ${seconds(performance.now() - started)} (not timed)`);
  return topic;
}

/** KAFKA_BROKERS, else a local broker for this run. */
async function benchBroker(): Promise<{ brokers: string; local: LocalBroker | undefined }> {
  const given = process.env.KAFKA_BROKERS;
  if (given !== undefined && given !== '') return { brokers: given, local: undefined };
  const local = await startLocalBroker({ log: (line) => console.log(`[kafka] ${line}`) });
  return { brokers: local.brokers, local };
}

const QUIET_CONTEXT: CliContext = { env: {}, stdout: () => undefined, stderr: (text) => process.stderr.write(text) };
const input = await cachedInput();
const workspace = await mkdtemp(join(tmpdir(), 'raretide-bench-replay-'));
try {
  const fitStarted = performance.now();
  const fitted = await fitModel(
    { schema: SCHEMA, records: firstRecords(input, fitSample), labelPath: 'outcome', training: { epochs: 8, seed: 1 } },
    { onBackend: (_backend, message) => console.log(message) },
  );
  const modelDir = join(workspace, 'model');
  const modelId = await saveModel(modelDir, fitted.bundle);
  fitted.dispose();
  console.log(`fitted model ${modelId} on the first ${count(fitSample)} records in ${seconds(performance.now() - fitStarted)} (not timed; default network size, 8 epochs)`);
  console.log(`input: ${count(recordCount)} records, ${((await stat(input)).size / 2 ** 20).toFixed(1)} MiB, codec ${codec}; rss before the replays ${mebibytes(process.memoryUsage.rss())}\n`);

  const floor = await timedReplay('floor', modelDir, { compressor_fault: 0.001, door_ajar: 0.001 });
  const balanced = await timedReplay('balanced', modelDir, TARGETS);
  const verified = await timedVerify(modelDir);
  const runs: [string, Measured<ReplaySummary>][] = [
    ['floor (targets met, no model call)', floor],
    ['balanced (targets 5 % + 5 %, k ≤ 5)', balanced],
  ];
  if (flags['skip-topic'] !== true) {
    const broker = await benchBroker();
    let topic: string | undefined;
    try {
      topic = await topicOfInput(broker.brokers);
      runs.push(['balanced, topic → file (3 partitions)', await timedReplay('balanced-topic', modelDir, TARGETS, { brokers: broker.brokers, name: topic })]);
    } finally {
      if (topic !== undefined && broker.local === undefined) await deleteTopics(broker.brokers, [topic]);
      await broker.local?.stop();
    }
  }
  const rows = [
    ['replay', 'elapsed', 'cpu', 'records/s', 'synthetic', 'synthetic/s', 'rss peak'],
    ...runs.map(([label, { result: summary, rssPeak, cpuMs }]) => [
      label,
      seconds(summary.elapsedMs),
      seconds(cpuMs),
      count(summary.recordsPerSecond),
      count(summary.records.synthetic),
      count(Math.round((summary.records.synthetic * 1000) / summary.elapsedMs)),
      mebibytes(rssPeak),
    ]),
  ];
  const widths = rows[0]!.map((_, column) => Math.max(...rows.map((row) => row[column]!.length)));
  for (const row of rows) console.log(row.map((cell, column) => (column === 0 ? cell.padEnd(widths[column]!) : cell.padStart(widths[column]!))).join('  '));
  const shares = balanced.result.classes.map((entry) => `${entry.label} ${(entry.before.share * 100).toFixed(2)} % → ${(entry.after.share * 100).toFixed(2)} %`).join(', ');
  console.log(`\nbalanced/floor: elapsed ${(balanced.result.elapsedMs / floor.result.elapsedMs).toFixed(2)}×, cpu ${(balanced.cpuMs / floor.cpuMs).toFixed(2)}×; shares ${shares}`);
  const fromTopic = runs[2]?.[1].result;
  if (fromTopic !== undefined) {
    console.log(`topic → file / file → file: records/s ${(fromTopic.recordsPerSecond / balanced.result.recordsPerSecond).toFixed(2)}× (records in partition order rather than file order, so the synthetic counts differ a little)`);
  }
  const { result: check } = verified;
  console.log(
    `regenerate --verify of the balanced output: ${count(check.checked)} synthetic records checked (${count(check.matched)} matched) of ${count(check.records)} in ${seconds(check.elapsedMs)}, ` +
      `cpu ${seconds(verified.cpuMs)}, ${count(Math.round((check.records * 1000) / check.elapsedMs))} output records/s, rss peak ${mebibytes(verified.rssPeak)}`,
  );
  console.log(`goal: ${count(recordCount)} records file → file ${recordCount === 1_000_000 ? 'in under 60 s' : '(the goal is stated for 1,000,000)'}: ${seconds(balanced.result.elapsedMs)}`);
  console.log(`process peak rss (whole run, fitting included): ${mebibytes(process.resourceUsage().maxRSS * 1024)}; load average at the end ${loadavg().map((value) => value.toFixed(1)).join(' ')} on ${availableParallelism()} cores`);
} finally {
  await rm(workspace, { recursive: true, force: true });
}

function positiveInteger(name: string, text: string | undefined): number {
  const value = Number(text);
  if (!Number.isInteger(value) || value < 1) fail(`${name} must be a positive integer, got \`${text}\``);
  return value;
}

function fail(message: string): never {
  throw new Error(message);
}

function count(value: number): string {
  return value.toLocaleString('en-US');
}

function seconds(ms: number): string {
  return `${(ms / 1000).toFixed(1)} s`;
}

function mebibytes(bytes: number): string {
  return `${Math.round(bytes / 2 ** 20)} MiB`;
}

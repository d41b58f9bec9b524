/**
 * `raretide demo --kafka --duration` on the broker the integration setup provides (KAFKA_BROKERS):
 * in-process, a small history and a short live run under a unique topic prefix. It must exit 0, and the
 * output topic must hold exactly what the demo reports: every produced reading passed through once, the
 * synthetic readings it counted, each tagged with the demo's model, the faults oversampled.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import type { CliContext } from '../../connector/cli/cli-context.js';
import { registerDemo } from '../../connector/cli/commands/demo.js';
import { demoTopics, DEMO_TARGETS } from '../../connector/cli/demo/demo-config.js';
import type { PumpStationReading } from '../../connector/cli/demo/pump-station-schema.js';
import { DEFAULT_FAULT_RATES } from '../../connector/cli/demo/pump-station-telemetry.js';
import { pumpStationSchema } from '../../connector/cli/demo/scenario-files.js';
import { EXIT_OK, runCli } from '../../connector/cli/program.js';
import { readWholeTopic } from '../support/adapter-loop.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { readTagged, type TaggedMessage } from '../support/run-worker-scenario.js';
import { deleteTopics, uniqueName } from '../support/topics.js';

const brokers = kafkaBrokers();
const prefix = uniqueName('demo');
const topics = demoTopics(prefix);
let workspace = '';
let run: { code: number; stdout: string; stderr: string };
let output: TaggedMessage[];
let sourceCount = 0;

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-demo-kafka-'));
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: { KAFKA_BROKERS: brokers }, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const args = ['demo', '--kafka', '--dir', join(workspace, 'demo'), '--records', '3000', '--epochs', '2', '--duration', '8', '--rate', '300', '--topic-prefix', prefix];
  const code = await runCli(['node', 'raretide', ...args], [registerDemo], context);
  run = { code, stdout, stderr };
  output = await readTagged(brokers, topics.output, 3);
  sourceCount = (await readWholeTopic(brokers, topics.source, 3)).length;
});

afterAll(async () => {
  await deleteTopics(brokers, [topics.source, topics.output, topics.deadLetter, `raretide-state.${topics.group}`]).catch(() => undefined);
  await rm(workspace, { recursive: true, force: true });
});

/** `produced N readings; the worker consumed C and wrote O originals + S synthetic`, as the demo prints it. */
function reported(): { produced: number; consumed: number; originals: number; synthetic: number; modelId: string } {
  const figures = /produced ([\d,]+) readings; the worker consumed ([\d,]+) and wrote ([\d,]+) originals \+ ([\d,]+) synthetic/.exec(run.stdout);
  const model = /model ([0-9a-f]{16})/.exec(run.stdout);
  if (figures === null || model === null) throw new Error(`the demo did not report its figures:\n${run.stdout}\n${run.stderr}`);
  const number = (text: string) => Number(text.replace(/,/g, ''));
  return { produced: number(figures[1]!), consumed: number(figures[2]!), originals: number(figures[3]!), synthetic: number(figures[4]!), modelId: model[1]! };
}

describe('raretide demo --kafka --duration 8', () => {
  it('exits 0 after a clean stop, on the given cluster, saying where it ran', () => {
    expect(run.code, run.stderr).toBe(EXIT_OK);
    expect(run.stdout).toContain(`the cluster at KAFKA_BROKERS=${brokers}`);
    expect(run.stdout).toMatch(/stopped by --duration 8 s/);
    expect(run.stdout).toMatch(/metrics http:\/\/127\.0\.0\.1:\d+\/metrics/);
    expect(run.stderr).toMatch(/^live \d+\.\d s: produced [\d,]+, consumed/m);
  });

  it('consumed every reading it produced, and wrote each once with as many synthetic readings as it reported', () => {
    const figures = reported();
    // At 300 readings a second for 8 s, less the time to start the producer.
    expect(figures.produced).toBeGreaterThan(1_000);
    expect(sourceCount).toBe(figures.produced);
    expect(figures.consumed).toBe(figures.produced);
    const originals = output.filter(({ tag }) => tag.kind === 'original');
    const synthetic = output.filter(({ tag }) => tag.kind === 'synthetic');
    expect(originals).toHaveLength(figures.originals);
    expect(figures.originals).toBe(figures.produced);
    expect(synthetic).toHaveLength(figures.synthetic);
    for (const { tag } of synthetic) expect(tag.kind === 'synthetic' && tag.modelId).toBe(figures.modelId);
  });

  it('oversamples every fault on the output topic, towards its target share', () => {
    const perClass = new Map<string, number>();
    for (const { message } of output) {
      const reading = pumpStationSchema.type.fromBuffer(message.value!) as PumpStationReading;
      perClass.set(reading.condition, (perClass.get(reading.condition) ?? 0) + 1);
    }
    for (const [fault, target] of Object.entries(DEMO_TARGETS)) {
      const share = (perClass.get(fault) ?? 0) / output.length;
      // Well above its rate in the readings; a short live run may not have closed the whole gap yet.
      expect(share, fault).toBeGreaterThan(1.5 * DEFAULT_FAULT_RATES[fault as keyof typeof DEFAULT_FAULT_RATES]);
      expect(share, fault).toBeLessThan(target + 0.02);
    }
  });
});

/**
 * Demo timing: runs `raretide demo` (the file demo: generate, fit, replay, evaluate) in a fresh temp
 * directory and prints each step's wall time, the total, the process CPU time and the load average
 * before and after, so a slow run on a busy machine can be told from a slow demo. The goal (issue 8): the
 * default demo within 3 minutes on the 2-core project machine. Prints figures only; asserts nothing.
 *
 *   npx tsx test/bench/demo.ts [--records 20000] [--epochs 30] [--seed 1]
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { availableParallelism, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';

import type { CliContext } from '../../connector/cli/cli-context.js';
import { DEFAULT_DEMO_EPOCHS, DEFAULT_DEMO_RECORDS } from '../../connector/cli/commands/demo.js';
import { demoTopics } from '../../connector/cli/demo/demo-config.js';
import { runFileDemo } from '../../connector/cli/demo/run-file-demo.js';
import { positiveInteger } from './flags.js';

const { values } = parseArgs({ options: { records: { type: 'string' }, epochs: { type: 'string' }, seed: { type: 'string' } } });
const records = values.records === undefined ? DEFAULT_DEMO_RECORDS : positiveInteger('--records', values.records);
const epochs = values.epochs === undefined ? DEFAULT_DEMO_EPOCHS : positiveInteger('--epochs', values.epochs);
const seed = values.seed === undefined ? 1 : positiveInteger('--seed', values.seed);

const dir = await mkdtemp(join(tmpdir(), 'raretide-demo-bench-'));
const context: CliContext = { env: {}, stdout: () => undefined, stderr: () => undefined };
const load = () => loadavg().map((value) => value.toFixed(1)).join(' ');
const loadBefore = load();
const cpuBefore = process.cpuUsage();
try {
  const result = await runFileDemo(
    { dir: join(dir, 'demo'), records, seed, quiet: true, config: { brokers: '127.0.0.1:9092', topics: demoTopics('raretide-demo'), epochs, metricsPort: 0 } },
    { context, now: () => performance.now() },
  );
  const cpu = process.cpuUsage(cpuBefore);
  const seconds = (ms: number) => `${(ms / 1000).toFixed(1)} s`;
  console.log(`raretide demo, ${records.toLocaleString('en-US')} readings, ${epochs} epochs at most, seed ${seed}; ${availableParallelism()} cores`);
  for (const [step, ms] of Object.entries(result.stepMs)) console.log(`  ${step.padEnd(9)} ${seconds(ms).padStart(8)}`);
  console.log(`  ${'total'.padEnd(9)} ${seconds(result.elapsedMs).padStart(8)}  (goal: 180 s)`);
  console.log(`  process CPU ${seconds((cpu.user + cpu.system) / 1000)} (user ${seconds(cpu.user / 1000)}, system ${seconds(cpu.system / 1000)}); load average before ${loadBefore}, after ${load()}`);
  console.log(`  fit: ${result.model.epochs} epochs (best ${result.model.bestEpoch}) on ${result.model.backend}; verdict: ${result.report.verdict.headline}`);
} finally {
  await rm(dir, { recursive: true, force: true });
}

import { mkdtemp, readdir, readFile, rm, stat, truncate, writeFile, copyFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../../connector/cli/cli-context.js';
import { registerReplay } from '../../../connector/cli/commands/replay.js';
import { EXIT_FAILURE, EXIT_OK, EXIT_USAGE, runCli } from '../../../connector/cli/program.js';
import type { ReplaySummary } from '../../../connector/cli/replay/replay-summary.js';
import { ContainerFileReader } from '../../../connector/avro/container/container-reader.js';
import { ContainerFileWriter } from '../../../connector/avro/container/container-writer.js';
import { syncMarkerFor } from '../../../connector/files/sync-marker.js';
import { PROVENANCE_FIELD_NAME, fromHeaders, fromProvenanceRecord } from '../../../connector/pipeline/provenance.js';
import { fitModel } from '../../../model/fit.js';
import { saveModel } from '../../../model/vae/index.js';
import { SORTER_EVENT_SCHEMA, sorterEvents, sorterSchema, type SorterEvent } from '../pipeline/support/sorter-events.js';

async function replay(args: readonly string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: {}, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const code = await runCli(['node', 'raretide', 'replay', ...args], [registerReplay], context);
  return { code, stdout, stderr };
}

const TARGETS = { jam: 0.1, misroute: 0.05 };
let workspace = '';
let inputFile = '';
let configFile = '';
let events: SorterEvent[] = [];

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-replay-'));
  // Invented sorter events (see sorter-events.ts); two lack their label and go to the dead letters.
  events = sorterEvents(3000, { jam: 0.03, misroute: 0.02 }, 21);
  events[10]!.outcome = null;
  events[2000]!.outcome = null;
  inputFile = join(workspace, 'sorter-history.avro');
  const writer = await ContainerFileWriter.create(inputFile, { schema: sorterSchema, codec: 'deflate', blockSizeBytes: 16_384 });
  for (const event of events) await writer.append(event);
  await writer.close();

  const fitted = await fitModel({
    schema: SORTER_EVENT_SCHEMA,
    records: events.filter((event) => event.outcome !== null) as never,
    labelPath: 'outcome',
    training: { hidden: [16], latent: 2, epochs: 4, batchSize: 256, seed: 3 },
  });
  const modelDir = join(workspace, 'model');
  await saveModel(modelDir, fitted.bundle);
  fitted.dispose();
  configFile = join(workspace, 'replay.yaml');
  await writeFile(
    configFile,
    ['label: {from: field, path: outcome}', 'balance:', '  targets: {jam: 0.1, misroute: 0.05}', '  maxPerRecord: 5', '  seed: 3', 'model:', `  dir: ${modelDir}`, ''].join('\n'),
  );
}, 60_000);
afterAll(async () => rm(workspace, { recursive: true, force: true }));

async function readAll(path: string): Promise<{ reader: ContainerFileReader; records: Record<string, unknown>[] }> {
  const reader = await ContainerFileReader.open(path);
  const records: Record<string, unknown>[] = [];
  for await (const record of reader) records.push(record as Record<string, unknown>);
  return { reader, records };
}

describe('raretide replay, file → file', () => {
  let first = '';
  let second = '';
  let runs: { code: number; stdout: string; stderr: string }[] = [];
  let summary: ReplaySummary;
  beforeAll(async () => {
    first = join(workspace, 'balanced-1.avro');
    second = join(workspace, 'balanced-2.avro');
    runs = [
      await replay(['--config', configFile, '--file', inputFile, '--out', first, '--include-originals']),
      await replay(['--config', configFile, '--file', inputFile, '--out', second, '--include-originals', '--quiet']),
    ];
    summary = JSON.parse(await readFile(`${first}.summary.json`, 'utf8')) as ReplaySummary;
  }, 60_000);

  it('writes byte-identical output for the same input, model and seed', async () => {
    expect(runs.map((run) => run.code)).toEqual([EXIT_OK, EXIT_OK]);
    expect(runs[0]!.stderr).not.toMatch(/error/);
    expect(runs[1]!.stdout).toBe('');
    expect(runs[0]!.stdout).toContain(`model ${summary.model.id}, seed 3`);
    const [a, b] = await Promise.all([readFile(first), readFile(second)]);
    expect(a.length).toBeGreaterThan(10_000);
    expect(a.equals(b)).toBe(true);
    // The sync marker comes from the seed (Avro specification, "Object Container Files": 16 bytes after the header).
    expect(a.includes(syncMarkerFor(3))).toBe(true);
    expect((await readFile(`${first}.dead-letter.jsonl`)).equals(await readFile(`${second}.dead-letter.jsonl`))).toBe(true);
  });

  it('writes a summary: counts before and after per class, shares against targets, model id, seed, elapsed', () => {
    expect(summary).toMatchObject({ command: 'replay', input: inputFile, output: first, seed: 3, includeOriginals: true, provenance: 'field' });
    expect(summary.model.id).toMatch(/^[0-9a-f]{16}$/);
    expect(summary.elapsedMs).toBeGreaterThan(0);
    expect(summary.records.read).toBe(3000);
    expect(summary.records.deadLettered).toBe(2);
    expect(summary.deadLetters).toEqual({ 'missing-label': 2 });
    expect(summary.records.written).toBe(2998 + summary.records.synthetic);
    const byLabel = new Map(summary.classes.map((entry) => [entry.label, entry]));
    expect(byLabel.get('ok')).toMatchObject({ target: null, status: 'untargeted', after: { synthetic: 0 } });
    for (const [label, target] of Object.entries(TARGETS)) {
      const entry = byLabel.get(label)!;
      expect(entry.target).toBe(target);
      expect(entry.before.share).toBeLessThan(target / 2);
      expect(Math.abs(entry.after.share - target)).toBeLessThan(0.005);
      expect(entry.status).toBe('met');
      expect(entry.written).toBe(entry.before.records + entry.after.synthetic);
    }
    const before = summary.classes.reduce((sum, entry) => sum + entry.before.records, 0);
    expect(before).toBe(2998);
  });

  it('carries provenance in the added field: null for originals, the tag for synthetic records', async () => {
    const { reader, records } = await readAll(first);
    expect(reader.header.metadata.get('raretide.model')?.toString()).toBe(summary.model.id);
    expect(records).toHaveLength(summary.records.written);
    const perClass = new Map<string, number>();
    let synthetic = 0;
    for (const record of records) {
      perClass.set(record.outcome as string, (perClass.get(record.outcome as string) ?? 0) + 1);
      const tag = fromProvenanceRecord(record[PROVENANCE_FIELD_NAME]);
      expect(tag.ok).toBe(true);
      if (!tag.ok || tag.value === null) continue;
      synthetic += 1;
      const source = events[Number(tag.value.source.offset)]!;
      expect(tag.value).toMatchObject({ modelId: summary.model.id, seed: 3n, temperature: 1, source: { topic: 'sorter-history.avro', partition: 0 } });
      expect(record.outcome).toBe(source.outcome);
      expect(record.parcelId).toBe(source.parcelId);
    }
    expect(synthetic).toBe(summary.records.synthetic);
    // The file's own class shares match the targets (±0.5 percentage points).
    for (const [label, target] of Object.entries(TARGETS)) expect(Math.abs(perClass.get(label)! / records.length - target)).toBeLessThan(0.005);
  });

  it('writes provenance to a JSON-lines sidecar instead when asked, leaving the schema alone', async () => {
    const out = join(workspace, 'sidecar.avro');
    const result = await replay(['--config', configFile, '--file', inputFile, '--out', out, '--provenance', 'sidecar', '--quiet']);
    expect(result.code).toBe(EXIT_OK);
    const { reader, records } = await readAll(out);
    expect(reader.header.writer.fingerprint.hex).toBe(sorterSchema.fingerprint.hex);
    const lines = (await readFile(`${out}.provenance.jsonl`, 'utf8')).trimEnd().split('\n').map((line) => JSON.parse(line) as { record: number; provenance: Record<string, string> });
    expect(lines).toHaveLength(records.length);
    expect(lines.map((line) => line.record)).toEqual(records.map((_, index) => index));
    // Without --include-originals the output holds synthetic records only.
    for (const line of lines) {
      const tag = fromHeaders([line.provenance]);
      expect(tag.ok && tag.value.kind).toBe('synthetic');
    }
  });

  it('fails on a corrupt input with the file and byte offset, and leaves no output behind', async () => {
    const corrupt = join(workspace, 'corrupt.avro');
    await copyFile(inputFile, corrupt);
    await truncate(corrupt, (await stat(corrupt)).size - 100);
    const out = join(workspace, 'from-corrupt.avro');
    const result = await replay(['--config', configFile, '--file', corrupt, '--out', out, '--quiet']);
    expect(result.code).toBe(EXIT_FAILURE);
    expect(result.stderr).toMatch(/corrupt\.avro.*at byte [0-9]+.*truncated or corrupt/);
    const left = (await readdir(workspace)).filter((name) => name.includes('from-corrupt'));
    expect(left).toEqual([]);
  });

  it('asks for an output, and refuses to write over its input (exit 2)', async () => {
    const missing = await replay(['--config', configFile, '--file', inputFile]);
    expect(missing.code).toBe(EXIT_USAGE);
    expect(missing.stderr).toMatch(/--out <out\.avro>/);
    const over = await replay(['--config', configFile, '--file', inputFile, '--out', inputFile]);
    expect(over.code).toBe(EXIT_USAGE);
    expect(over.stderr).toMatch(/is the input file/);
    const seed = await replay(['--config', configFile, '--file', inputFile, '--out', join(workspace, 'x.avro'), '--seed', '-1']);
    expect(seed.code).toBe(EXIT_USAGE);
    expect(seed.stderr).toMatch(/--seed = "-1"/);
    const cap = await replay(['--config', configFile, '--file', inputFile, '--out', join(workspace, 'x.avro'), '--rate-cap']);
    expect(cap.code).toBe(EXIT_USAGE);
    expect(cap.stderr).toMatch(/add rateCap or drop the flag/);
    expect((await readdir(workspace)).filter((name) => name.startsWith('x.avro') || name.startsWith('.x.avro'))).toEqual([]);
  });
});

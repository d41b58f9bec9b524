import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ContainerFileReader } from '../../../connector/avro/container/container-reader.js';
import { ContainerFileWriter } from '../../../connector/avro/container/container-writer.js';
import type { CliContext } from '../../../connector/cli/cli-context.js';
import { registerRegenerate } from '../../../connector/cli/commands/regenerate.js';
import { registerReplay } from '../../../connector/cli/commands/replay.js';
import { openSession } from '../../../connector/cli/regenerate/regenerate-session.js';
import { verifyOutput } from '../../../connector/cli/regenerate/verify-output.js';
import { EXIT_FAILURE, EXIT_OK, EXIT_USAGE, runCli } from '../../../connector/cli/program.js';
import { withProvenanceField } from '../../../connector/files/provenance-field.js';
import { PROVENANCE_FIELD_NAME, fromProvenanceRecord, toHeaders, type SyntheticTag } from '../../../connector/pipeline/provenance.js';
import { fitModel } from '../../../model/fit.js';
import { saveModel } from '../../../model/vae/index.js';
import { SORTER_EVENT_SCHEMA, sorterEvents, sorterSchema } from '../pipeline/support/sorter-events.js';

async function cli(command: 'replay' | 'regenerate', args: readonly string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: {}, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const code = await runCli(['node', 'raretide', command, ...args], [registerReplay, registerRegenerate], context);
  return { code, stdout, stderr };
}

interface OutputRecord {
  readonly index: number;
  readonly value: Record<string, unknown>;
  readonly tag: SyntheticTag | null;
}

async function outputRecords(path: string): Promise<OutputRecord[]> {
  const records: OutputRecord[] = [];
  for await (const value of await ContainerFileReader.open(path)) {
    const record = value as Record<string, unknown>;
    const tag = fromProvenanceRecord(record[PROVENANCE_FIELD_NAME]);
    if (!tag.ok) throw new Error(tag.problem.reason);
    records.push({ index: records.length, value: record, tag: tag.value });
  }
  return records;
}

/** The record without its provenance field, in the record schema. */
function recordPart(record: Record<string, unknown>): Record<string, unknown> {
  const { [PROVENANCE_FIELD_NAME]: _provenance, ...fields } = record;
  return fields;
}

let workspace = '';
let inputFile = '';
let configFile = '';
let modelId = '';
let output = '';
let records: OutputRecord[] = [];

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-regenerate-'));
  // Invented sorter events (see sorter-events.ts). The null codec carries over to the replay's output,
  // so a flipped byte there changes a value instead of breaking a deflate stream.
  const events = sorterEvents(2000, { jam: 0.03, misroute: 0.02 }, 31);
  inputFile = join(workspace, 'sorter-history.avro');
  const writer = await ContainerFileWriter.create(inputFile, { schema: sorterSchema, codec: 'null', blockSizeBytes: 8192 });
  for (const event of events) await writer.append(event);
  await writer.close();

  const fitted = await fitModel({
    schema: SORTER_EVENT_SCHEMA,
    records: events as never,
    labelPath: 'outcome',
    training: { hidden: [16], latent: 2, epochs: 3, batchSize: 256, seed: 5 },
  });
  modelId = await saveModel(join(workspace, 'model'), fitted.bundle);
  fitted.dispose();
  configFile = join(workspace, 'replay.yaml');
  await writeFile(
    configFile,
    ['label: {from: field, path: outcome}', 'balance:', '  targets: {jam: 0.1, misroute: 0.05}', '  maxPerRecord: 5', '  seed: 11', 'model:', `  dir: ${join(workspace, 'model')}`, ''].join('\n'),
  );
  output = join(workspace, 'balanced.avro');
  const replayed = await cli('replay', ['--config', configFile, '--file', inputFile, '--out', output, '--include-originals', '--quiet']);
  expect(replayed).toMatchObject({ code: EXIT_OK, stderr: '' });
  records = await outputRecords(output);
}, 60_000);
afterAll(async () => rm(workspace, { recursive: true, force: true }));

function synthetic(): (OutputRecord & { tag: SyntheticTag })[] {
  return records.filter((record): record is OutputRecord & { tag: SyntheticTag } => record.tag !== null);
}

describe('raretide regenerate --verify', () => {
  it('passes on a replay output: every synthetic record regenerates to the same bytes', async () => {
    const result = await cli('regenerate', ['--config', configFile, '--file', inputFile, '--out', output, '--verify']);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(EXIT_OK);
    const count = synthetic().length;
    expect(count).toBeGreaterThan(50);
    expect(result.stdout).toContain(`with model ${modelId} (provenance in the record field)`);
    expect(result.stdout).toContain(`records: ${records.length} (${records.length - count} originals, not regenerated); synthetic checked ${count}, matched ${count}, mismatched 0`);
  });

  it("gives the same verdict in tiny batches that split a source record's variants (differential check)", async () => {
    const session = await openSession({ configPath: configFile, input: inputFile }, { env: {}, stdout: () => undefined, stderr: () => undefined });
    try {
      const summary = await verifyOutput(session, { output, input: inputFile }, { clock: { now: () => performance.now() }, batchSize: 3 });
      expect(summary).toMatchObject({ records: records.length, checked: synthetic().length, matched: synthetic().length, mismatched: 0 });
    } finally {
      await session.close();
    }
  });

  it('passes on a replay output with a provenance sidecar', async () => {
    const sidecarOutput = join(workspace, 'sidecar.avro');
    expect((await cli('replay', ['--config', configFile, '--file', inputFile, '--out', sidecarOutput, '--provenance', 'sidecar', '--quiet'])).code).toBe(EXIT_OK);
    const result = await cli('regenerate', ['--config', configFile, '--file', inputFile, '--out', sidecarOutput, '--verify']);
    expect(result.code).toBe(EXIT_OK);
    const count = synthetic().length;
    expect(result.stdout).toContain('(provenance in the sidecar)');
    expect(result.stdout).toContain(`records: ${count} (0 originals, not regenerated); synthetic checked ${count}, matched ${count}, mismatched 0`);
  });

  it('fails after one flipped byte inside a synthetic record, naming that record', async () => {
    const target = synthetic()[7]!;
    const fileType = withProvenanceField(sorterSchema).type;
    const body = fileType.toBuffer(target.value);
    const bytes = await readFile(output);
    // Null codec: the record's encoded body sits in the file as it is (Avro specification, "Object
    // Container Files"). It holds a random-looking double, so it occurs once.
    const start = bytes.indexOf(body);
    expect(start).toBeGreaterThan(0);
    expect(bytes.lastIndexOf(body)).toBe(start);
    // A byte inside weightKg: the first byte that changes when only weightKg changes.
    const moved = fileType.toBuffer({ ...target.value, weightKg: (target.value.weightKg as number) + 1 });
    const within = body.findIndex((byte, i) => byte !== moved[i]);
    bytes.writeUInt8(bytes.readUInt8(start + within) ^ 0x01, start + within);
    const flipped = join(workspace, 'flipped.avro');
    await writeFile(flipped, bytes);

    const result = await cli('regenerate', ['--config', configFile, '--file', inputFile, '--out', flipped, '--verify', '--quiet']);
    expect(result.code).toBe(EXIT_FAILURE);
    expect(result.stderr).toContain(`1 of ${synthetic().length} synthetic records of ${flipped} do not match their regeneration; the first is record ${target.index} (sorter-history.avro:0@${target.tag.source.offset} sample ${target.tag.sampleIndex}`);
    expect(result.stderr).toMatch(/field weightKg: file has [0-9.e-]+, regenerated [0-9.e-]+/);
    expect(result.stdout).toContain('mismatched 1');
    expect(result.stdout).toContain(`  record ${target.index} (`);
  });

  it('refuses an output made by another model, naming both ids and the fix', async () => {
    const other = join(workspace, 'other-model.avro');
    const writer = await ContainerFileWriter.create(other, { schema: withProvenanceField(sorterSchema), metadata: { 'raretide.model': 'feedfacecafebeef' } });
    await writer.append({ ...records[0]!.value });
    await writer.close();
    const result = await cli('regenerate', ['--config', configFile, '--file', inputFile, '--out', other, '--verify']);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr).toContain(`was made by model feedfacecafebeef, but the loaded model (${join(workspace, 'model')}) is ${modelId}; pass the model directory that wrote it`);
  });
});

describe('raretide regenerate, one record', () => {
  /** A synthetic record that is not its source's first variant: regenerated alone, it must equal variant i of the batch. */
  function laterVariant(): OutputRecord & { tag: SyntheticTag } {
    const found = synthetic().find((record) => record.tag.sampleIndex >= 2);
    expect(found).toBeDefined();
    return found!;
  }

  it('reproduces record n of an output exactly, read from its provenance field', async () => {
    const target = laterVariant();
    const result = await cli('regenerate', ['--config', configFile, '--file', inputFile, '--out', output, '--record', String(target.index)]);
    expect(result.code).toBe(EXIT_OK);
    expect(result.stderr).toContain(`Record ${target.index} of ${output}: matches its regeneration byte for byte`);
    // Printed in Avro's JSON encoding (Avro specification, "JSON Encoding"), which reads back exactly.
    const printed = sorterSchema.type.fromString(result.stdout.trim());
    expect(sorterSchema.type.toBuffer(printed).equals(sorterSchema.type.toBuffer(recordPart(target.value)))).toBe(true);
  });

  it('reproduces it from header flags and from a JSON tag, and compares with a given record', async () => {
    const target = laterVariant();
    const flags = toHeaders(target.tag).flatMap((header) => Object.entries(header).map(([name, value]) => `${name}=${value}`));
    const fromFlags = await cli('regenerate', ['--config', configFile, '--file', inputFile, ...flags.flatMap((flag) => ['--tag', flag])]);
    expect(fromFlags.code).toBe(EXIT_OK);
    const expected = `${sorterSchema.type.toString(recordPart(target.value))}\n`;
    expect(fromFlags.stdout).toBe(expected);

    const tagJson = JSON.stringify(target.value[PROVENANCE_FIELD_NAME]);
    const same = await cli('regenerate', ['--config', configFile, '--file', inputFile, '--tag-json', tagJson, '--compare', expected]);
    expect(same.code).toBe(EXIT_OK);
    expect(same.stdout).toBe(expected);
    expect(same.stderr).toContain('matches its regeneration byte for byte');

    const altered = sorterSchema.type.toString({ ...recordPart(target.value), lane: ((target.value.lane as number) + 1) % 8 });
    const differs = await cli('regenerate', ['--config', configFile, '--file', inputFile, '--tag-json', tagJson, '--compare', altered]);
    expect(differs.code).toBe(EXIT_FAILURE);
    expect(differs.stderr).toMatch(/does not match its regeneration: field lane: given [0-7], regenerated [0-7]/);
  });

  it('refuses a tag naming another model id, naming both ids', async () => {
    const target = laterVariant();
    const flags = toHeaders({ ...target.tag, modelId: '00000000deadbeef' }).flatMap((header) => Object.entries(header).map(([name, value]) => ['--tag', `${name}=${value}`]));
    const result = await cli('regenerate', ['--config', configFile, '--file', inputFile, ...flags.flat()]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr).toMatch(new RegExp(`was made by model 00000000deadbeef, but the loaded model \\(.*\\) is ${modelId}; pass the model directory that wrote it \\(--model-dir <dir>`));
  });

  it('refuses a tag from another source file, and asks for exactly one tag', async () => {
    const target = laterVariant();
    const renamed = JSON.stringify({ ...(target.value[PROVENANCE_FIELD_NAME] as object), sourceTopic: 'other.avro' });
    const other = await cli('regenerate', ['--config', configFile, '--file', inputFile, '--tag-json', renamed]);
    expect(other.code).toBe(EXIT_USAGE);
    expect(other.stderr).toContain('was made from other.avro:0, but --file');
    expect(other.stderr).toContain('or --source-name other.avro if it was renamed');
    const none = await cli('regenerate', ['--config', configFile, '--file', inputFile]);
    expect(none.code).toBe(EXIT_USAGE);
    expect(none.stderr).toContain('regenerate needs one tag');
  });
});
